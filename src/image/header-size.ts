/**
 * Image width and height read from the file header alone, without an image
 * library: enough for the harvest's size check of every fetched piece, which
 * then needs neither a decoder nor its start-up. Undefined for formats or
 * layouts it does not know; the caller then asks the decoder.
 *
 * Layouts: PNG IHDR (PNG spec §11.2.2: width and height big-endian at bytes 16
 * and 20); JPEG SOFn markers (ITU T.81 §B.2.2: height then width after the
 * precision byte); GIF logical screen (GIF89a §18, little-endian at byte 6);
 * WebP VP8/VP8L/VP8X chunks (RFC 9649 §2.5, §2.6, §2.7).
 */
export function headerSize(b: Uint8Array): { width: number; height: number; format: string } | undefined {
  if (b.length >= 24 && b[0] === 0x89 && b[1] === 0x50 && b[2] === 0x4e && b[3] === 0x47 && b[12] === 0x49 && b[13] === 0x48 && b[14] === 0x44 && b[15] === 0x52) {
    return { width: u32be(b, 16), height: u32be(b, 20), format: 'png' };
  }
  if (b.length >= 4 && b[0] === 0xff && b[1] === 0xd8) return jpegSize(b);
  if (b.length >= 10 && b[0] === 0x47 && b[1] === 0x49 && b[2] === 0x46 && b[3] === 0x38) {
    return { width: b[6] | (b[7] << 8), height: b[8] | (b[9] << 8), format: 'gif' };
  }
  if (b.length >= 30 && ascii(b, 0, 4) === 'RIFF' && ascii(b, 8, 4) === 'WEBP') return webpSize(b);
  return undefined;
}

function u32be(b: Uint8Array, i: number): number {
  return ((b[i] << 24) >>> 0) + (b[i + 1] << 16) + (b[i + 2] << 8) + b[i + 3];
}

function ascii(b: Uint8Array, i: number, n: number): string {
  return String.fromCharCode(...b.subarray(i, i + n));
}

/** Walks the JPEG marker segments to the first start-of-frame (SOF0–SOF15 but DHT C4, JPG C8, DAC CC). */
function jpegSize(b: Uint8Array): { width: number; height: number; format: string } | undefined {
  let i = 2;
  while (i + 4 <= b.length) {
    if (b[i] !== 0xff) return undefined;
    const marker = b[i + 1];
    if (marker === 0xff) {
      i++; // fill byte
      continue;
    }
    if (marker === 0xd8 || marker === 0x01 || (marker >= 0xd0 && marker <= 0xd7)) {
      i += 2; // markers without a length
      continue;
    }
    const len = (b[i + 2] << 8) | b[i + 3];
    if (len < 2) return undefined;
    if (marker >= 0xc0 && marker <= 0xcf && marker !== 0xc4 && marker !== 0xc8 && marker !== 0xcc) {
      if (i + 9 > b.length) return undefined;
      return { height: (b[i + 5] << 8) | b[i + 6], width: (b[i + 7] << 8) | b[i + 8], format: 'jpeg' };
    }
    if (marker === 0xda || marker === 0xd9) return undefined; // scan data or end before any frame header
    i += 2 + len;
  }
  return undefined;
}

function webpSize(b: Uint8Array): { width: number; height: number; format: string } | undefined {
  const chunk = ascii(b, 12, 4);
  if (chunk === 'VP8 ' && b[23] === 0x9d && b[24] === 0x01 && b[25] === 0x2a) {
    return { width: (b[26] | (b[27] << 8)) & 0x3fff, height: (b[28] | (b[29] << 8)) & 0x3fff, format: 'webp' };
  }
  if (chunk === 'VP8L' && b[20] === 0x2f) {
    const bits = b[21] | (b[22] << 8) | (b[23] << 16) | (b[24] << 24);
    return { width: (bits & 0x3fff) + 1, height: ((bits >>> 14) & 0x3fff) + 1, format: 'webp' };
  }
  if (chunk === 'VP8X') {
    return { width: 1 + (b[24] | (b[25] << 8) | (b[26] << 16)), height: 1 + (b[27] | (b[28] << 8) | (b[29] << 16)), format: 'webp' };
  }
  return undefined;
}
