/** Sign-out: a form POST from the page header (Astro's origin check refuses cross-site posts). */
import type { APIRoute } from 'astro';
import { endSession } from '@lib/server/auth-forms';

export const POST: APIRoute = (ctx) => {
  endSession(ctx);
  return ctx.redirect('/signin?signedout=1', 303);
};

export const GET: APIRoute = (ctx) => ctx.redirect('/', 303);
