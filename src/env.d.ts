/// <reference types="astro/client" />

declare namespace App {
  interface Locals {
    /** The signed-in, active person, resolved once per request by src/middleware.ts; null when signed out. */
    person: import('./lib/signed-in-person').SignedInPerson | null;
    /** This request's id (from the server wrapper, or made here): in every log line about it and on the 500 page. */
    requestId: string;
  }
}

/** Migration file names this build expects (astro.config.mjs, vite define). */
declare const __BEAMWARDEN_MIGRATIONS__: string[];
