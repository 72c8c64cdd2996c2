/**
 * zod, as every module of ours imports it, set once: without its compiled fast path (`jitless`). zod would otherwise
 * probe for it with `new Function("")` when the first object schema is built, which the site's Content-Security-Policy
 * blocks in the browser — harmless, zod falls back — but the browser files a policy violation for it on every screen
 * whose islands validate. (Two schema modules used to set this themselves, so screens that loaded neither reported
 * the probe; the server ran without the fast path already.) Pure: no I/O.
 */
import { z } from 'zod';

z.config({ jitless: true });

export { z };
export type { ZodType } from 'zod';
