/**
 * The batch runner's view of the codec: `compressFile` and `readRkf` from src-main/node/services.
 * They are imported lazily inside the worker so the main thread stays light, and so a build without the
 * codec still gives a clear per-file error instead of failing to start.
 */
import { createHash } from 'node:crypto';
import { createReadStream } from 'node:fs';
import { mkdir } from 'node:fs/promises';
import { dirname } from 'node:path';
import { InputError, RankfoldError } from '../../contract';
import { describeFileError } from '../image/open-file';
import { describeWriteError } from '../io/atomic';
import type { compressFile } from '../services/compress';

/** The compressor the batch worker calls (its options and hooks are those of the service). */
export type CompressFile = typeof compressFile;

let compressor: CompressFile | undefined;

/** Load `compressFile` from src-main/node/services/compress. */
export async function loadCompressor(): Promise<CompressFile> {
  if (compressor) return compressor;
  let mod: { compressFile?: CompressFile };
  try {
    mod = await import('../services/compress');
  } catch (err) {
    throw new RankfoldError(
      `this build has no compressor (src-main/node/services/compress): ${(err as Error).message}`,
    );
  }
  if (typeof mod.compressFile !== 'function')
    throw new RankfoldError('this build has no compressFile in services/compress');
  compressor = mod.compressFile;
  return compressor;
}

export type ReadRkf = (
  input: string,
  opts?: { pixelLimit?: number },
) => Promise<{
  decoded: {
    width: number;
    height: number;
    channels: number;
    bitDepth: number;
    samples: Float32Array[];
    header: { sourceSha256: string };
  };
}>;

/** Load `readRkf` (validate and decode a container into samples) from src-main/node/services/expand. */
export async function loadReader(): Promise<ReadRkf> {
  let mod: { readRkf?: ReadRkf };
  try {
    mod = await import('../services/expand');
  } catch (err) {
    throw new RankfoldError(
      `this build has no container reader (src-main/node/services/expand): ${(err as Error).message}`,
    );
  }
  if (typeof mod.readRkf !== 'function')
    throw new RankfoldError('this build has no readRkf in services/expand');
  return mod.readRkf;
}

/** SHA-256 (hex) of a file's bytes, streamed. Errors name the file. */
export function hashFile(file: string): Promise<string> {
  return new Promise((resolve, reject) => {
    const h = createHash('sha256');
    const s = createReadStream(file);
    s.on('data', (c) => h.update(c));
    s.on('end', () => resolve(h.digest('hex')));
    s.on('error', (err) => {
      const code = (err as NodeJS.ErrnoException).code;
      if (code === 'ENOENT') reject(new InputError(file, 'no such file (it disappeared during the batch)'));
      else reject(describeFileError(file, err));
    });
  });
}

/**
 * Create the output's folder. A recursive mkdir reports ENOENT for any failure below an existing folder
 * (a read-only file system, for one), so on failure each level is made alone to get the real reason.
 * @throws OutputError naming the output and the reason.
 */
export async function makeOutputFolder(output: string): Promise<void> {
  const dir = dirname(output);
  try {
    await mkdir(dir, { recursive: true });
    return;
  } catch (err) {
    const chain: string[] = [];
    for (let d = dir; dirname(d) !== d; d = dirname(d)) chain.unshift(d);
    for (const d of chain) {
      try {
        await mkdir(d);
      } catch (e) {
        const code = (e as NodeJS.ErrnoException).code;
        if (code === 'EEXIST') continue;
        throw describeWriteError(output, e);
      }
    }
    throw describeWriteError(output, err);
  }
}
