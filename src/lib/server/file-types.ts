/**
 * Upload types are decided by the bytes (magic numbers via file-type), never by the file name or the type the
 * browser claims. Executables are refused outright, whatever they are called.
 */
import { fileTypeFromBuffer } from 'file-type';
import { DomainError } from './errors';

export interface Sniffed {
  mime: string;
  ext: string;
}

/** What the bytes are, or null when unrecognised (plain text, for instance). */
export async function sniffFile(bytes: Uint8Array): Promise<Sniffed | null> {
  const t = await fileTypeFromBuffer(bytes);
  return t ? { mime: t.mime, ext: t.ext } : null;
}

const EXECUTABLE_MIMES = new Set([
  'application/x-msdownload', 'application/x-dosexec', 'application/x-elf', 'application/x-mach-binary',
  'application/x-executable', 'application/vnd.microsoft.portable-executable', 'application/x-sharedlib',
  'application/java-archive', 'application/x-msi', 'application/wasm',
]);

/** True for programs: Windows (MZ), ELF, Mach-O, scripts with a #! line, and what file-type calls executable. */
export function looksExecutable(bytes: Uint8Array, sniffed: Sniffed | null): boolean {
  if (sniffed && EXECUTABLE_MIMES.has(sniffed.mime)) return true;
  const b = bytes;
  if (b.length >= 2 && b[0] === 0x4d && b[1] === 0x5a) return true; // MZ
  if (b.length >= 4 && b[0] === 0x7f && b[1] === 0x45 && b[2] === 0x4c && b[3] === 0x46) return true; // ELF
  if (b.length >= 4) {
    const magic = ((b[0]! << 24) | (b[1]! << 16) | (b[2]! << 8) | b[3]!) >>> 0;
    if ([0xfeedface, 0xfeedfacf, 0xcefaedfe, 0xcffaedfe, 0xcafebabe].includes(magic)) return true; // Mach-O
  }
  if (b.length >= 2 && b[0] === 0x23 && b[1] === 0x21) return true; // #!
  return false;
}

/**
 * Checks an upload: not empty, at most `maxBytes`, not a program, and one of `allowed` by content.
 * Throws 413 file_too_large or 415 file_type_refused with a message that names `label`.
 */
export async function checkUpload(bytes: Uint8Array, allowed: readonly string[], label: string, maxBytes: number): Promise<Sniffed> {
  if (bytes.byteLength === 0) throw new DomainError('invalid', 'invalid', `The ${label} is empty.`, { file: 'The file is empty.' });
  if (bytes.byteLength > maxBytes) {
    throw new DomainError('too_large', 'file_too_large', `The ${label} is larger than ${Math.round(maxBytes / 1024 / 1024)} MB.`);
  }
  const sniffed = await sniffFile(bytes);
  if (looksExecutable(bytes, sniffed)) {
    throw new DomainError('unsupported_type', 'file_type_refused', `The ${label} is a program, not a document; programs are never accepted.`);
  }
  if (!sniffed || !allowed.includes(sniffed.mime)) {
    throw new DomainError('unsupported_type', 'file_type_refused', `The ${label} must be ${allowed.join(' or ')}; this file is ${sniffed ? sniffed.mime : 'of an unknown type'} by its content.`);
  }
  return sniffed;
}
