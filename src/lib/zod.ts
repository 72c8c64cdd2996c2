/**
 * zod, as every module of ours imports it. In the browser its compiled fast path is off (`jitless`): zod would
 * otherwise probe for it with `new Function("")` when the first object schema is built, which the site's
 * Content-Security-Policy blocks — harmless, zod falls back — but the browser files a policy violation for it on every
 * screen whose islands validate. On the server nothing changes. Pure: no I/O.
 */
import { z } from 'zod';

if (typeof window !== 'undefined') z.config({ jitless: true });

export { z };
export type { ZodType } from 'zod';
