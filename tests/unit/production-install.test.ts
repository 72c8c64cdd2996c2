/**
 * A production install (`npm ci --omit=dev`) carries none of the local fakes, and one copy of each heavy
 * package: read from npm's own view of the tree (`npm ls --omit=dev --all --json`).
 */
import { spawnSync } from 'node:child_process';
import path from 'node:path';
import { describe, expect, it } from 'vitest';

interface Node {
  version?: string;
  dependencies?: Record<string, Node>;
}

function tree(args: string[]): Node {
  // npm exits non-zero for mere warnings (e.g. packages a test run left extraneous); the JSON tree is what counts
  const r = spawnSync('npm', ['ls', '--all', '--json', ...args], { cwd: path.resolve(import.meta.dirname, '../..'), encoding: 'utf8', maxBuffer: 64 * 1024 * 1024 });
  return JSON.parse(r.stdout) as Node;
}

function versions(root: Node): Map<string, Set<string>> {
  const seen = new Map<string, Set<string>>();
  const walk = (n: Node) => {
    for (const [name, child] of Object.entries(n.dependencies ?? {})) {
      if (child.version) {
        if (!seen.has(name)) seen.set(name, new Set());
        seen.get(name)!.add(child.version);
      }
      walk(child);
    }
  };
  walk(root);
  return seen;
}

describe('production install', () => {
  const prod = versions(tree(['--omit=dev']));

  // (tsx may still be listed: it is an optional peer of vite, present in the tree because it is a devDependency;
  // a production install does not fetch it, and nothing in dist/ needs it)
  it('contains none of the local fakes', () => {
    for (const fake of ['maildev', 's3rver', 'stripe-stateful-mock', 'oidc-provider']) {
      expect(prod.has(fake), `${fake} is a devDependency only`).toBe(false);
    }
    // what the production server, worker and migrations do need is there
    for (const needed of ['astro', 'pino', 'compression', 'knex', 'pg', 'pg-boss', 'nodemailer', '@aws-sdk/client-s3', 'stripe']) {
      expect(prod.has(needed), needed).toBe(true);
    }
  });

  it('has one version of sharp and one FullCalendar version across its packages', () => {
    expect([...(prod.get('sharp') ?? [])]).toHaveLength(1);
    const calendar = new Set([...prod.entries()].filter(([n]) => n.startsWith('@fullcalendar/')).flatMap(([, v]) => [...v]));
    expect([...calendar]).toHaveLength(1);
  });
});
