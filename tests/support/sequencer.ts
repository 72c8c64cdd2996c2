/**
 * The order files start in (vitest.config.ts; decision record 0470): longest first, so the two-wide parallel pass
 * does not end with one long file running alone. A file's length is its last time in this checkout (vitest's own
 * cache), else its time in `file-seconds.json` (a committed record from a full run: a clean clone has no cache, and
 * vitest would then start the largest files first, whatever they cost), else zero (a new file starts last).
 * `--sequence.shuffle.files` uses vitest's random order instead (vitest.config.ts does not set this sequencer then).
 */
import fs from 'node:fs';
import path from 'node:path';
import { BaseSequencer, type TestSpecification } from 'vitest/node';

const RECORD = path.join(import.meta.dirname, 'file-seconds.json');
const recorded = JSON.parse(fs.readFileSync(RECORD, 'utf8')) as Record<string, number>;

export default class LongestFirst extends BaseSequencer {
  override async sort(files: TestSpecification[]): Promise<TestSpecification[]> {
    const root = this.ctx.config.root;
    const seconds = (f: TestSpecification): number => {
      const rel = path.relative(root, f.moduleId).split(path.sep).join('/');
      const cached = this.ctx.cache.getFileTestResults(`${f.project.name}:${rel}`);
      return cached ? cached.duration / 1000 : (recorded[rel] ?? 0);
    };
    return [...files].sort((a, b) => seconds(b) - seconds(a));
  }
}
