import { stripHtml } from '../iiif/language-map.ts';

/**
 * One body value of an annotation, as the index keeps it: every body, not only
 * the one that matched a class, so datasets can be filtered and stratified by
 * attributes (grain direction, technique) annotators wrote beside the label.
 */
export interface BodyTag {
  /** The text used for matching: HTML stripped, white space collapsed; or an IRI. */
  value: string;
  /** Web Annotation `purpose` (or the Open Annotation motivation it came with), when given. */
  purpose?: string;
  language?: string;
  /** The body as written, when it differs from `value` (HTML comments). */
  raw?: string;
}

/** Purposes that make a body a label (Web Annotation §3.3.5); a body with no purpose counts too. */
export const LABEL_PURPOSES = new Set(['tagging', 'classifying', 'identifying']);

/** Minimal HTML is recognised as text that starts with `<` and ends with `>` (Presentation 2.1 §4.4, 3.0 §4.5). */
export function looksLikeHtml(text: string, format?: string): boolean {
  const t = text.trim();
  return format === 'text/html' || format === 'application/xhtml+xml' || (t.startsWith('<') && t.endsWith('>'));
}

/** A text body as a tag: HTML stripped for matching and kept raw. */
export function textTag(text: string, fields: { purpose?: string; language?: string; format?: string }): BodyTag {
  const html = looksLikeHtml(text, fields.format);
  const value = html ? stripHtml(text) : text.trim();
  return {
    value,
    ...(fields.purpose ? { purpose: fields.purpose } : {}),
    ...(fields.language ? { language: fields.language } : {}),
    ...(html && value !== text ? { raw: text } : {}),
  };
}

/** The body values that may name a class: tags with a labelling purpose or none. */
export function labelValues(tags: readonly BodyTag[]): string[] {
  return tags.filter((t) => t.purpose === undefined || LABEL_PURPOSES.has(t.purpose)).map((t) => t.value);
}
