import { describe, expect, it } from 'vitest';
import sharp, { type Sharp } from 'sharp';
import { headerSize } from '../../src/image/header-size.ts';
import { imageSize } from '../../src/image/image-size.ts';
import { ImageError } from '../../src/errors.ts';

// The independent reference is libvips (through sharp): it writes each file and reads its size back.
describe('image size from the header alone', () => {
  const sizes = [[1, 1], [257, 93], [1200, 901], [4000, 3]] as const;
  const encoders: [string, (s: Sharp) => Sharp][] = [
    ['png', (s) => s.png()],
    ['jpeg baseline', (s) => s.jpeg({ quality: 80 })],
    ['jpeg progressive with EXIF before the frame', (s) => s.jpeg({ progressive: true }).withMetadata({ exif: { IFD0: { Copyright: 'invented' } } })],
    ['webp lossy', (s) => s.webp({ quality: 70 })],
    ['webp lossless', (s) => s.webp({ lossless: true })],
    ['gif', (s) => s.gif()],
  ];
  for (const [name, encode] of encoders) {
    it(`${name}: equals what libvips reads`, async () => {
      for (const [w, h] of sizes) {
        const body = await encode(sharp({ create: { width: w, height: h, channels: 3, background: '#7a5' } })).toBuffer();
        const meta = await sharp(body).metadata();
        expect(headerSize(body), `${name} ${w}×${h}`).toMatchObject({ width: meta.width, height: meta.height });
      }
    });
  }
  it('says nothing for what it does not know, and the caller falls back to the decoder (TIFF)', async () => {
    const tiff = await sharp({ create: { width: 33, height: 44, channels: 3, background: '#000' } }).tiff().toBuffer();
    expect(headerSize(tiff)).toBeUndefined();
    expect(await imageSize(tiff)).toMatchObject({ width: 33, height: 44 });
    expect(headerSize(Buffer.from('<html>'))).toBeUndefined();
  });
  it('refuses a header that claims more pixels than the limit, before any decoding', async () => {
    const png = await sharp({ create: { width: 16, height: 16, channels: 3, background: '#777' } }).png().toBuffer();
    png.writeUInt32BE(200_000, 16); // IHDR width (PNG spec §11.2.2)
    png.writeUInt32BE(200_000, 20);
    await expect(imageSize(png)).rejects.toThrow(ImageError);
    await expect(imageSize(png)).rejects.toThrow(/claims 200000×200000 pixels/);
  });
});
