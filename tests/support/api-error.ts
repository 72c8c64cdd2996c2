/** The one error shape of every API route ({"error":{"code","message","fields"?}}), checked the same way everywhere. */
import { expect } from 'vitest';
import { body } from './client';

export interface ApiError {
  code: string;
  message: string;
  fields?: Record<string, string>;
}

/** Expects `res` to be the given status with the given error code and a message; returns the error for more checks. */
export async function expectError(res: Response, status: number, code: string): Promise<ApiError> {
  const b = await body<{ error?: ApiError }>(res);
  expect({ status: res.status, code: b.error?.code }, JSON.stringify(b)).toEqual({ status, code });
  expect(typeof b.error!.message).toBe('string');
  return b.error!;
}
