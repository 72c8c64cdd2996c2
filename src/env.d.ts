/// <reference types="astro/client" />

declare namespace App {
  interface Locals {
    /** The signed-in, active person, resolved once per request by src/middleware.ts; null when signed out. */
    person: import('./lib/signed-in-person').SignedInPerson | null;
  }
}
