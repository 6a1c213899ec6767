import { JsonView } from './json-view.ts';

/** Presentation 3.0 §4.4: keys are BCP 47 codes or `none`; values are arrays of strings. */
export type LanguageMap = Record<string, string[]>;

/**
 * Reads a language map leniently: v3 maps, plain strings (v2 and Web Annotation
 * labels) and v2 `{"@value","@language"}` objects all become a LanguageMap.
 */
export function readLanguageMap(view: JsonView): LanguageMap | undefined {
  if (!view.exists()) return undefined;
  if (view.isString()) return { none: [view.value as string] };
  if (view.isArray()) {
    const out: LanguageMap = {};
    for (const item of view.items()) {
      const m = readLanguageMap(item);
      if (m) for (const [k, v] of Object.entries(m)) (out[k] ??= []).push(...v);
    }
    return out;
  }
  if (view.isObject()) {
    const obj = view.object();
    if ('@value' in obj) {
      const lang = typeof obj['@language'] === 'string' ? (obj['@language'] as string) : 'none';
      return { [lang]: [view.at('@value').string()] };
    }
    const out: LanguageMap = {};
    for (const key of Object.keys(obj)) {
      const values = view.at(key).list().map((v) => v.string());
      out[key] = values;
    }
    return out;
  }
  return view.fail('a language map (an object of arrays of strings)');
}

/**
 * Picks display text from a language map: the preferred language, then `none`,
 * then `en`, then the first key in sorted order (deterministic), joined by "; ".
 */
export function pickText(map: LanguageMap | undefined, preferred = 'en'): string {
  if (!map) return '';
  const keys = Object.keys(map);
  const order = [preferred, 'none', 'en', ...keys.slice().sort()];
  for (const k of order) {
    const v = map[k];
    if (v && v.length > 0) return v.join('; ');
  }
  return '';
}

/** Removes markup from the minimal HTML allowed in summaries and statements (Presentation 3.0 §4.5). */
export function stripHtml(text: string): string {
  return text.replace(/<[^>]*>/g, '').replace(/&amp;/g, '&').replace(/&lt;/g, '<').replace(/&gt;/g, '>').replace(/&quot;/g, '"').replace(/\s+/g, ' ').trim();
}
