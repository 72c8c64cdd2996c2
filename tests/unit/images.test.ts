/** Uploaded photos: a decompression bomb is refused from its header; a real photo is re-encoded without its metadata. */
import zlib from 'node:zlib';
import sharp from 'sharp';
import { describe, expect, it } from 'vitest';
import { DomainError } from '../../src/lib/server/http';
import { PHOTO_MAX_PIXELS, safePhoto } from '../../src/lib/server/images';

function chunk(type: string, data: Buffer): Buffer {
  const len = Buffer.alloc(4);
  len.writeUInt32BE(data.length);
  const body = Buffer.concat([Buffer.from(type, 'ascii'), data]);
  const crc = Buffer.alloc(4);
  crc.writeUInt32BE(zlib.crc32(body) >>> 0);
  return Buffer.concat([len, body, crc]);
}

/** A PNG whose header claims width × height RGB pixels, with a few KB of compressed zeros. */
function bombPng(width: number, height: number): Buffer {
  const ihdr = Buffer.alloc(13);
  ihdr.writeUInt32BE(width, 0);
  ihdr.writeUInt32BE(height, 4);
  ihdr.set([8, 2, 0, 0, 0], 8);
  const idat = zlib.deflateSync(Buffer.alloc(1024 * 1024), { level: 9 });
  return Buffer.concat([Buffer.from([0x89, 0x50, 0x4e, 0x47, 0x0d, 0x0a, 0x1a, 0x0a]), chunk('IHDR', ihdr), chunk('IDAT', idat), chunk('IEND', Buffer.alloc(0))]);
}

describe('safePhoto', () => {
  it('refuses a 60 000 × 60 000 PNG of a few KB (3.6 gigapixels) without decoding it', async () => {
    const bomb = bombPng(60_000, 60_000);
    expect(bomb.length).toBeLessThan(10_000);
    const err = await safePhoto(bomb).catch((e: unknown) => e);
    expect(err).toBeInstanceOf(DomainError);
    expect((err as DomainError).kind).toBe('invalid');
    expect(60_000 * 60_000).toBeGreaterThan(PHOTO_MAX_PIXELS);
  });

  it('refuses an SVG with a script, whatever it is called', async () => {
    const svg = Buffer.from('<svg xmlns="http://www.w3.org/2000/svg" width="10" height="10"><script>alert(1)</script></svg>');
    const err = await safePhoto(svg).catch((e: unknown) => e);
    expect((err as DomainError).kind).toBe('unsupported_type');
  });

  it('re-encodes a real photo as JPEG and drops its metadata (GPS and the like)', async () => {
    const png = await sharp({ create: { width: 64, height: 48, channels: 3, background: { r: 200, g: 80, b: 20 } } })
      .png()
      .withMetadata({ exif: { IFD0: { Copyright: 'secret place' } } })
      .toBuffer();
    const out = await safePhoto(png);
    expect(out.contentType).toBe('image/jpeg');
    expect([out.width, out.height]).toEqual([64, 48]);
    const meta = await sharp(out.bytes).metadata();
    expect(meta.format).toBe('jpeg');
    expect(meta.exif).toBeUndefined();
  });
});
