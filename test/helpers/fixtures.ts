import { readFileSync } from 'node:fs';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';

export const repoRoot = join(dirname(fileURLToPath(import.meta.url)), '..', '..');
export const fixture = (...p: string[]) => join(repoRoot, 'test', 'fixtures', ...p);
export const image = (name: string) => fixture('images', name);
/** Parse one of the reference JSON files (sources in test/fixtures/reference/notes.md). */
export const reference = <T = any>(name: string): T =>
  JSON.parse(readFileSync(fixture('reference', name), 'utf8'));
