/** Password hashing with argon2id (@node-rs/argon2, prebuilt; its defaults follow RFC 9106's second recommendation). */
import { hash, verify } from '@node-rs/argon2';

const ARGON2ID = 2; // Algorithm.Argon2id (a const enum in the package's types)

export function hashPassword(plain: string): Promise<string> {
  return hash(plain, { algorithm: ARGON2ID, memoryCost: 19456, timeCost: 2, parallelism: 1 });
}

export async function verifyPassword(stored: string, plain: string): Promise<boolean> {
  try {
    return await verify(stored, plain);
  } catch {
    return false;
  }
}

/** A hash to verify against when no account matches, so both paths take the same time. */
let decoy: Promise<string> | undefined;
export function decoyHash(): Promise<string> {
  decoy ??= hashPassword('beamwarden-decoy-password-that-never-matches');
  return decoy;
}
