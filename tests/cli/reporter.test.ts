import { describe, expect, it } from 'vitest';
import { Reporter } from '../../src/cli/reporter.ts';

const stream = (isTTY: boolean) => {
  let text = '';
  return { s: { isTTY, write: (t: string) => ((text += t), true) } as unknown as NodeJS.WriteStream, text: () => text };
};

describe('progress and notes', () => {
  it('draws progress only on a terminal, and not with --quiet or --json', () => {
    for (const [tty, quiet, json, draws] of [[true, false, false, true], [false, false, false, false], [true, true, false, false], [true, false, true, false]] as const) {
      const out = stream(tty);
      const r = new Reporter({ quiet, json, stream: out.s });
      r.progress('fetch', 5, 5);
      expect(out.text().includes('fetch'), JSON.stringify({ tty, quiet, json })).toBe(draws);
    }
  });
  it('bold only on a terminal without NO_COLOR', () => {
    const before = process.env.NO_COLOR;
    try {
      delete process.env.NO_COLOR;
      expect(new Reporter({ quiet: false, json: false, stream: stream(true).s }).bold('x')).toBe('\u001b[1mx\u001b[22m');
      process.env.NO_COLOR = '1';
      expect(new Reporter({ quiet: false, json: false, stream: stream(true).s }).bold('x')).toBe('x');
      expect(new Reporter({ quiet: false, json: false, stream: stream(false).s }).bold('x')).toBe('x');
    } finally {
      if (before === undefined) delete process.env.NO_COLOR;
      else process.env.NO_COLOR = before;
    }
  });
  it('warnings survive --json but not --quiet', () => {
    const a = stream(false);
    new Reporter({ quiet: false, json: true, stream: a.s }).warn('careful');
    expect(a.text()).toBe('warning: careful\n');
    const b = stream(false);
    new Reporter({ quiet: true, json: false, stream: b.s }).warn('careful');
    expect(b.text()).toBe('');
  });
});
