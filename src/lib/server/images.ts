/**
 * Photos people upload (e.g. with a fault report): checked by content, refused when they claim more pixels
 * than a camera makes (a decompression bomb: a few KB that would unpack to gigabytes), then re-encoded as
 * JPEG, which drops metadata such as GPS and anything hidden after the image data.
 */
import sharp from 'sharp';
import { checkUpload } from './file-types';
import { DomainError } from './errors';

export const PHOTO_MAX_BYTES = 10 * 1024 * 1024;
/** 50 megapixels: above any phone camera, far below what would exhaust memory. */
export const PHOTO_MAX_PIXELS = 50_000_000;
const PHOTO_TYPES = ['image/jpeg', 'image/png', 'image/webp', 'image/heic', 'image/avif'] as const;

export async function safePhoto(bytes: Uint8Array, maxEdge = 2000): Promise<{ bytes: Uint8Array; contentType: 'image/jpeg'; width: number; height: number }> {
  await checkUpload(bytes, PHOTO_TYPES, 'photo', PHOTO_MAX_BYTES);
  let meta: Awaited<ReturnType<ReturnType<typeof sharp>['metadata']>>;
  try {
    meta = await sharp(bytes, { limitInputPixels: PHOTO_MAX_PIXELS }).metadata();
  } catch {
    throw new DomainError('invalid', 'bad_image', 'The photo could not be read.', { photo: 'Choose a JPEG, PNG or WebP photo.' });
  }
  if (!meta.width || !meta.height || meta.width * meta.height > PHOTO_MAX_PIXELS) {
    throw new DomainError('invalid', 'image_too_large', `The photo has more than ${PHOTO_MAX_PIXELS / 1e6} megapixels.`, { photo: 'Take a smaller photo.' });
  }
  try {
    const { data, info } = await sharp(bytes, { limitInputPixels: PHOTO_MAX_PIXELS, failOn: 'error' })
      .rotate()
      .resize({ width: maxEdge, height: maxEdge, fit: 'inside', withoutEnlargement: true })
      .jpeg({ quality: 82 })
      .toBuffer({ resolveWithObject: true });
    return { bytes: new Uint8Array(data), contentType: 'image/jpeg', width: info.width, height: info.height };
  } catch {
    throw new DomainError('invalid', 'bad_image', 'The photo could not be read.', { photo: 'Choose a JPEG, PNG or WebP photo.' });
  }
}
