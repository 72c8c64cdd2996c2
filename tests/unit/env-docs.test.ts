/**
 * Every setting is described once (ENV_DOCS in src/lib/server/env.ts): the validated schema, `.env.example`
 * and the README's table all list the same variables. Run `npm run env:docs` after changing the list.
 */
import fs from 'node:fs';
import path from 'node:path';
import { describe, expect, it } from 'vitest';
import { ENV_DOCS, envSchemaKeys } from '../../src/lib/server/env';
import { ROOT, envExample, readmeWithTable } from '../../scripts/env-docs';

describe('settings documentation', () => {
  it('every variable the app validates is documented, and every documented app variable is validated', () => {
    const documented = new Set(ENV_DOCS.map((v) => v.name));
    for (const key of envSchemaKeys()) expect(documented.has(key), `${key} is in ENV_DOCS`).toBe(true);
    const appOnlyOutsideSchema = new Set(['HOST', 'PORT']); // read by the server wrapper itself
    for (const v of ENV_DOCS.filter((d) => d.scope === 'app')) {
      expect(envSchemaKeys().includes(v.name) || appOnlyOutsideSchema.has(v.name), `${v.name} is validated`).toBe(true);
    }
    expect(new Set(ENV_DOCS.map((v) => v.name)).size).toBe(ENV_DOCS.length);
  });

  it('.env.example is generated from the list and is current', () => {
    const file = fs.readFileSync(path.join(ROOT, '.env.example'), 'utf8');
    expect(file).toBe(envExample());
    for (const v of ENV_DOCS) expect(file).toContain(`# ${v.name}=`);
  });

  it("the README's settings table is generated from the list and is current", () => {
    const readme = fs.readFileSync(path.join(ROOT, 'README.md'), 'utf8');
    expect(readme).toBe(readmeWithTable(readme));
    for (const v of ENV_DOCS) expect(readme).toContain(`| \`${v.name}\` |`);
  });
});
