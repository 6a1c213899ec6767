import { describe, expect, it } from 'vitest';
import { fragmentToRect, parseXywh } from '../../src/geometry/media-fragment.ts';

describe('Media Fragments URI 1.0, spatial dimension (#naming-space)', () => {
  it('reads the spec examples; pixel is the default unit', () => {
    expect(parseXywh('xywh=160,120,320,240')).toEqual({ unit: 'pixel', x: 160, y: 120, w: 320, h: 240 });
    expect(parseXywh('xywh=pixel:160,120,320,240')).toEqual(parseXywh('xywh=160,120,320,240'));
    expect(parseXywh('xywh=percent:25,25,50,50')).toEqual({ unit: 'percent', x: 25, y: 25, w: 50, h: 50 });
  });
  it('resolves percent: x and w of the width, y and h of the height', () => {
    // Media Fragments #naming-space: a 50%×50% box at 25%,25%
    expect(fragmentToRect(parseXywh('xywh=percent:25,25,50,50')!, 640, 480)).toEqual({ x: 160, y: 120, w: 320, h: 240 });
  });
  it('takes the last occurrence of a dimension (§6.2.1) and ignores other dimensions', () => {
    expect(parseXywh('t=10,20&xywh=1,2,3,4&xywh=5,6,7,8')).toEqual({ unit: 'pixel', x: 5, y: 6, w: 7, h: 8 });
    expect(parseXywh('t=30,60')).toBeUndefined();
  });
  it.each([
    ['xywh=1,2,3', /four non-negative numbers/],
    ['xywh=-1,2,3,4', /four non-negative numbers/],
    ['xywh=1,2,0,4', /zero width or height/],
    ['xywh=percent:50,0,60,10', /past 100 percent/],
    ['xywh=em:1,2,3,4', /four non-negative numbers/],
  ])('refuses %s', (text, re) => expect(() => parseXywh(text)).toThrow(re));
});
