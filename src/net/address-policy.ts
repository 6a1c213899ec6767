import { isIP } from 'node:net';

/**
 * Addresses a document from a public server must not make swatchbook contact:
 * loopback, private, link-local (cloud metadata lives at 169.254.169.254),
 * carrier-grade NAT, unspecified and unique-local ranges (RFC 1122 §3.2.1.3,
 * RFC 1918, RFC 3927, RFC 6598, RFC 4193, RFC 4291 §2.5.6), and the `localhost` names (RFC 6761 §6.3).
 */
export function isNonPublicHost(hostname: string): boolean {
  const h = hostname.toLowerCase().replace(/^\[|\]$/g, '').replace(/\.$/, '');
  if (h === 'localhost' || h.endsWith('.localhost')) return true;
  const kind = isIP(h);
  if (kind === 4) return isNonPublicV4(h);
  if (kind === 6) return isNonPublicV6(h);
  return false;
}

function isNonPublicV4(ip: string): boolean {
  const [a, b] = ip.split('.').map(Number);
  return a === 0 || a === 10 || a === 127 || (a === 169 && b === 254) || (a === 172 && b >= 16 && b <= 31) || (a === 192 && b === 168) || (a === 100 && b >= 64 && b <= 127);
}

function isNonPublicV6(ip: string): boolean {
  if (ip === '::' || ip === '::1') return true;
  const mapped = /^::ffff:(\d+\.\d+\.\d+\.\d+)$/.exec(ip);
  if (mapped) return isNonPublicV4(mapped[1]);
  const hex = /^::ffff:([0-9a-f]{1,4}):([0-9a-f]{1,4})$/.exec(ip);
  if (hex) {
    const hi = parseInt(hex[1], 16), lo = parseInt(hex[2], 16);
    return isNonPublicV4(`${hi >> 8}.${hi & 255}.${lo >> 8}.${lo & 255}`);
  }
  const first = parseInt(ip.split(':')[0] || '0', 16);
  return (first & 0xfe00) === 0xfc00 || (first & 0xffc0) === 0xfe80;
}
