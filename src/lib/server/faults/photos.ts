/** The photos of a fault report: checked by content, re-encoded without their metadata. */
import sharp from 'sharp';
import { DomainError } from '@lib/server/errors';
import { checkUpload } from '@lib/server/file-types';

/** At most this many photos per report, each at most this many bytes before re-encoding. */
export const MAX_PHOTOS = 3;
export const PHOTO_MAX_BYTES = 8 * 1024 * 1024;
const PHOTO_TYPES = ['image/jpeg', 'image/png', 'image/webp', 'image/gif', 'image/heic', 'image/avif', 'image/tiff'] as const;
/** Stored photos are re-encoded to JPEG no larger than this on their long side. */
const PHOTO_MAX_SIDE = 2000;

export interface PhotoUpload {
  bytes: Uint8Array;
}

/**
 * Checks and re-encodes the photos of a report: at most three, each an image by its content (programs and
 * SVG refused), at most 8 MB. Re-encoding to JPEG with sharp drops every metadata block (EXIF with its GPS
 * position, XMP, IPTC); the orientation is applied to the pixels first so the photo still stands upright.
 */
export async function preparePhotos(photos: readonly PhotoUpload[]): Promise<{ bytes: Buffer; width: number; height: number }[]> {
  if (photos.length > MAX_PHOTOS) {
    throw new DomainError('invalid', 'too_many_photos', `Attach at most ${MAX_PHOTOS} photos.`, { photos: `At most ${MAX_PHOTOS} photos.` });
  }
  const out = [];
  for (const [i, p] of photos.entries()) {
    await checkUpload(p.bytes, PHOTO_TYPES, `photo ${i + 1}`, PHOTO_MAX_BYTES);
    try {
      const { data, info } = await sharp(p.bytes, { limitInputPixels: 60_000_000 })
        .rotate()
        .resize({ width: PHOTO_MAX_SIDE, height: PHOTO_MAX_SIDE, fit: 'inside', withoutEnlargement: true })
        .jpeg({ quality: 82, mozjpeg: true })
        .toBuffer({ resolveWithObject: true });
      out.push({ bytes: data, width: info.width, height: info.height });
    } catch {
      throw new DomainError('unsupported_type', 'file_type_refused', `Photo ${i + 1} could not be read as an image.`, { photos: `Photo ${i + 1} is not a readable image.` });
    }
  }
  return out;
}

/** The photos of a posted report form: at most MAX_PHOTOS (422 too_many_photos), each at most PHOTO_MAX_BYTES (413). */
export async function photoUploads(files: readonly File[]): Promise<PhotoUpload[]> {
  const maxMb = PHOTO_MAX_BYTES / 1024 / 1024;
  if (files.length > MAX_PHOTOS) throw new DomainError('invalid', 'too_many_photos', `Attach at most ${MAX_PHOTOS} photos.`, { photos: `At most ${MAX_PHOTOS} photos.` });
  const photos: PhotoUpload[] = [];
  for (const f of files) {
    if (f.size > PHOTO_MAX_BYTES) throw new DomainError('too_large', 'file_too_large', `Each photo may be at most ${maxMb} MB.`, { photos: `${f.name} is larger than ${maxMb} MB.` });
    photos.push({ bytes: new Uint8Array(await f.arrayBuffer()) });
  }
  return photos;
}
