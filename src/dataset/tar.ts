/**
 * A byte-deterministic tar archive (POSIX ustar, IEEE Std 1003.1 "pax" interchange
 * format, ustar header): entries in the order given, regular files only, mode 0644,
 * owner and group 0 with empty names, modification time 0. The same entries give
 * the same bytes on every machine. Pure.
 */
export interface TarEntry {
  name: string;
  data: Uint8Array;
}

const BLOCK = 512;
/** Archives are padded to whole 10240-byte records (20 blocks), as tar writers do by default (from memory). */
const RECORD = 20 * BLOCK;

function octal(value: number, width: number): string {
  return `${value.toString(8).padStart(width - 1, '0')}\0`;
}

function header(name: string, size: number): Buffer {
  const h = Buffer.alloc(BLOCK, 0);
  let prefix = '';
  let base = name;
  if (Buffer.byteLength(name) > 100) {
    const cut = name.lastIndexOf('/', 155);
    if (cut <= 0 || Buffer.byteLength(name.slice(cut + 1)) > 100) throw new RangeError(`tar entry name too long for ustar: ${name}`);
    prefix = name.slice(0, cut);
    base = name.slice(cut + 1);
  }
  h.write(base, 0, 100, 'utf8');
  h.write(octal(0o644, 8), 100, 'ascii');
  h.write(octal(0, 8), 108, 'ascii');
  h.write(octal(0, 8), 116, 'ascii');
  h.write(octal(size, 12), 124, 'ascii');
  h.write(octal(0, 12), 136, 'ascii');
  h.fill(0x20, 148, 156); // checksum field counts as spaces while summing
  h.write('0', 156, 'ascii');
  h.write('ustar\0', 257, 'ascii');
  h.write('00', 263, 'ascii');
  h.write(prefix, 345, 155, 'utf8');
  let sum = 0;
  for (const b of h) sum += b;
  h.write(`${sum.toString(8).padStart(6, '0')}\0 `, 148, 'ascii');
  return h;
}

export function tarArchive(entries: readonly TarEntry[]): Buffer {
  const parts: Buffer[] = [];
  let length = 0;
  for (const e of entries) {
    const h = header(e.name, e.data.length);
    const pad = (BLOCK - (e.data.length % BLOCK)) % BLOCK;
    parts.push(h, Buffer.from(e.data), Buffer.alloc(pad));
    length += BLOCK + e.data.length + pad;
  }
  const end = 2 * BLOCK;
  const total = Math.ceil((length + end) / RECORD) * RECORD;
  parts.push(Buffer.alloc(total - length));
  return Buffer.concat(parts);
}
