/** Sniffs an image format from its first bytes (file signatures of each format's specification). */
export function sniffImage(body: Uint8Array): 'jpeg' | 'png' | 'gif' | 'webp' | 'tiff' | 'jp2' | undefined {
  const b = body;
  if (b.length >= 3 && b[0] === 0xff && b[1] === 0xd8 && b[2] === 0xff) return 'jpeg';
  if (b.length >= 8 && b[0] === 0x89 && b[1] === 0x50 && b[2] === 0x4e && b[3] === 0x47 && b[4] === 0x0d && b[5] === 0x0a && b[6] === 0x1a && b[7] === 0x0a) return 'png';
  if (b.length >= 6 && b[0] === 0x47 && b[1] === 0x49 && b[2] === 0x46 && b[3] === 0x38) return 'gif';
  if (b.length >= 12 && b[0] === 0x52 && b[1] === 0x49 && b[2] === 0x46 && b[3] === 0x46 && b[8] === 0x57 && b[9] === 0x45 && b[10] === 0x42 && b[11] === 0x50) return 'webp';
  if (b.length >= 4 && ((b[0] === 0x49 && b[1] === 0x49 && b[2] === 0x2a && b[3] === 0) || (b[0] === 0x4d && b[1] === 0x4d && b[2] === 0 && b[3] === 0x2a))) return 'tiff';
  if (b.length >= 12 && b[4] === 0x6a && b[5] === 0x50 && b[6] === 0x20 && b[7] === 0x20) return 'jp2';
  return undefined;
}

function looksLikeMarkup(body: Uint8Array): boolean {
  const head = Buffer.from(body.subarray(0, 256)).toString('latin1').trimStart().toLowerCase();
  return head.startsWith('<!doctype') || head.startsWith('<html') || head.startsWith('<?xml') || head.startsWith('<head') || head.startsWith('<body');
}

/**
 * Checks that a 200 response is what was asked for. Returns a reason when it
 * is not (an HTML error page served as 200, a JSON request answered with an image…).
 */
export function checkContent(kind: 'json' | 'image', contentType: string, body: Uint8Array): string | undefined {
  const type = contentType.split(';')[0].trim().toLowerCase();
  if (kind === 'image') {
    if (type.startsWith('text/html') || looksLikeMarkup(body)) return `expected an image, got an HTML page (content-type ${type || 'none'})`;
    if (type !== '' && !type.startsWith('image/') && type !== 'application/octet-stream') return `expected an image, got content-type ${type}`;
    if (body.length === 0) return 'expected an image, got an empty body';
    if (!sniffImage(body)) return `expected an image, got ${body.length} bytes that are no known image format`;
    return undefined;
  }
  if (type.startsWith('text/html') || looksLikeMarkup(body)) return `expected JSON, got an HTML page (content-type ${type || 'none'})`;
  if (type !== '' && !type.includes('json') && type !== 'text/plain' && type !== 'application/octet-stream') return `expected JSON or JSON-LD, got content-type ${type}`;
  return undefined;
}
