// @ts-check
import { defineConfig } from 'astro/config';
import node from '@astrojs/node';
import react from '@astrojs/react';
import tailwindcss from '@tailwindcss/vite';
import auth from 'auth-astro';
import fs from 'node:fs';

/**
 * Host names the server answers to. Astro only trusts a request's host when it is listed here;
 * add the public host of a deployment through PUBLIC_HOSTNAMES (comma separated) at build time.
 */
const extraHosts = (process.env.PUBLIC_HOSTNAMES ?? '')
  .split(',')
  .map((h) => h.trim())
  .filter(Boolean);

export default defineConfig({
  output: 'server',
  // middleware: scripts/serve.ts is the server and serves the build's static files itself (decision record 0476)
  adapter: node({ mode: 'middleware' }),
  outDir: process.env.ASTRO_OUT_DIR ?? './dist',
  server: { host: '127.0.0.1', port: 4321 },
  integrations: [react(), auth({ injectEndpoints: false })],
  security: {
    checkOrigin: true,
    allowedDomains: [{ hostname: '127.0.0.1' }, { hostname: 'localhost' }, ...extraHosts.map((hostname) => ({ hostname }))],
  },
  vite: {
    plugins: [tailwindcss()],
    // the schema this build expects: /readyz reports "migrations current" against this list
    define: { __BEAMWARDEN_MIGRATIONS__: JSON.stringify(fs.readdirSync('./migrations').filter((f) => f.endsWith('.ts')).sort()) },
    ssr: {
      external: ['@node-rs/argon2', 'sharp', 'pg', 'knex', 'pg-boss'],
    },
  },
});
