/** Server code logs through the one logger (src/lib/server/log.ts), never console.*, so every line is JSON with its context. */
import fs from 'node:fs';
import path from 'node:path';
import { describe, expect, it } from 'vitest';

const root = path.resolve(import.meta.dirname, '../..');

function files(dir: string): string[] {
  return fs.readdirSync(path.join(root, dir), { withFileTypes: true }).flatMap((e) => {
    const rel = path.join(dir, e.name);
    if (e.isDirectory()) return files(rel);
    return /\.(ts|astro)$/.test(e.name) ? [rel] : [];
  });
}

describe('server code', () => {
  it('has no console.* calls', () => {
    const server = [...files('src/lib/server'), ...files('src/pages'), 'src/middleware.ts', 'scripts/serve.ts', 'scripts/worker.ts'];
    const offenders = server.flatMap((f) =>
      fs
        .readFileSync(path.join(root, f), 'utf8')
        .split('\n')
        .map((line, i) => ({ f, i, line }))
        .filter(({ line }) => /\bconsole\.(log|error|warn|info|debug)\(/.test(line) && !line.trim().startsWith('//') && !line.trim().startsWith('*'))
        .map(({ f, i }) => `${f}:${i + 1}`),
    );
    expect(offenders).toEqual([]);
    expect(server.length).toBeGreaterThan(50);
  });
});
