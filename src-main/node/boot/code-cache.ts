/**
 * Runs one of the launcher's script bundles (dist/cli.cjs, dist/early.cjs: CommonJS builds of the same sources
 * as the ESM bundles, scripts/build.mjs) with V8's code cache, so that a start
 * spends less CPU compiling JavaScript. The cache (`BUNDLE.v8cache` beside the bundle) holds the bytecode of
 * every function a warm-up run of `npm run build` executed; V8 then neither parses the bundle nor compiles
 * those functions again when they first run (measured on the 2-core machine of issue #12: docs/architecture.md).
 *
 * A cache is used only when its first line names the build stamp in the bundle's own first line (each build
 * writes a fresh pair) and V8 accepts the rest (same V8 version and flags, same source length); otherwise,
 * or when it is missing or unreadable, the bundle compiles as it would without one: never an error.
 * Only the build's warm-up (RANKFOLD_WRITE_CODE_CACHE=1) writes caches, when its process exits.
 *
 * Built alone as dist/boot.cjs for bin/rankfold.mjs.
 * No import of the program's own modules: this runs before any of them has loaded.
 */
import { isAscii } from 'node:buffer';
import { readFileSync, renameSync, writeFileSync } from 'node:fs';
import { createRequire } from 'node:module';
import { dirname } from 'node:path';
import { Script } from 'node:vm';

/** The stamp in a bundle's first line (written by scripts/build.mjs) and on a cache's first line. */
const STAMP = /\/\*rankfold-build:(?!0{16})([0-9a-f]{16})\*\//;
/** Set by the build's warm-up run only: write each bundle's cache when its thread finishes. */
const WRITE_ENV = 'RANKFOLD_WRITE_CODE_CACHE';

/** The V8 data of `file`'s cache when its stamp is `stamp`, else undefined. */
function readCache(file: string, stamp: string): Buffer | undefined {
  try {
    const data = readFileSync(file);
    const nl = data.indexOf(10);
    return nl > 0 && data.toString('latin1', 0, nl) === stamp ? data.subarray(nl + 1) : undefined;
  } catch {
    return undefined;
  }
}

/** Write the cache of `script` (the bytecode of every function it has run so far), atomically. */
function writeCache(script: Script, file: string, stamp: string): void {
  try {
    const tmp = `${file}.${process.pid}.tmp`;
    writeFileSync(tmp, Buffer.concat([Buffer.from(`${stamp}\n`, 'latin1'), script.createCachedData()]));
    renameSync(tmp, file);
  } catch {
    // No cache: every start compiles, as it did before caches.
  }
}

/** What became of a bundle's cache: V8 used it, V8 refused it, or there was none for this build. */
type CacheUse = 'used' | 'refused' | 'none';

/** Run the CommonJS bundle `file` in this thread (with its cache, if one matches): its exports and the cache's use. */
export function runBundle(file: string): { exports: unknown; cache: CacheUse } {
  // esbuild writes ASCII (non-ASCII characters escaped): read as Latin-1 it is the same text, copied rather than
  // decoded from UTF-8 (~25 instructions a byte, 26 M for dist/cli.cjs under callgrind).
  const bytes = readFileSync(file);
  const source = bytes.toString(isAscii(bytes) ? 'latin1' : 'utf8');
  const stamp = STAMP.exec(source.slice(0, 200))?.[1];
  const cacheFile = `${file}.v8cache`;
  const cachedData = stamp ? readCache(cacheFile, stamp) : undefined;
  // The same wrapper Node's CommonJS loader puts around a module, on one line so positions stay the bundle's.
  const script = new Script(`(function (exports, require, module, __filename, __dirname) {${source}\n})`, {
    filename: file,
    ...(cachedData ? { cachedData } : {}),
  });
  if (stamp && process.env[WRITE_ENV] === '1')
    process.once('exit', () => writeCache(script, cacheFile, stamp));
  const module = { exports: {} as unknown };
  const wrapped = script.runInThisContext() as (...args: unknown[]) => void;
  wrapped.call(module.exports, module.exports, createRequire(file), module, file, dirname(file));
  return {
    exports: module.exports,
    cache: !cachedData ? 'none' : script.cachedDataRejected ? 'refused' : 'used',
  };
}
