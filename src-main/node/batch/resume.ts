/**
 * `--resume`: which outputs of an earlier run stand. A file whose row matches (same output, size, settings
 * and source SHA-256) is kept; a file with an output but no row (a kill between rename and journal, or a lost
 * manifest) is handed to a worker that checks the .rkf header; any other output is compressed again.
 */
import { stat } from 'node:fs/promises';
import type { BatchRow } from '../../contract';
import { hashFile } from './codec';
import { readManifest } from './manifest';
import type { PlannedFile } from './plan';
import { eachLimit } from './pool';

export interface ResumeState {
  /** Rows of outputs that stand, by path. */
  kept: Map<string, BatchRow>;
  /** Paths whose output is compressed again over the old one. */
  overwrite: Set<string>;
  /** Paths whose output the worker checks by its header before compressing. */
  verify: Set<string>;
}

async function existingSize(p: string): Promise<number | undefined> {
  try {
    const s = await stat(p);
    return s.isFile() ? s.size : undefined;
  } catch {
    return undefined;
  }
}

/**
 * Read the manifest of the earlier run and sort the planned files. `jobs` files are looked at (and hashed)
 * at once; a manifest that cannot be read adds a warning and every output is checked again.
 */
export async function resumeState(
  files: PlannedFile[],
  run: { manifest: string; settings: string; shardLabel: string; jobs: number; warnings: string[] },
): Promise<ResumeState> {
  const state: ResumeState = { kept: new Map(), overwrite: new Set(), verify: new Set() };
  const previous = new Map<string, BatchRow>();
  try {
    for (const r of (await readManifest(run.manifest)).rows) previous.set(r.path, r);
  } catch (err) {
    run.warnings.push(
      `previous manifest ${run.manifest} cannot be read (${(err as Error).message}); every output is checked again`,
    );
  }
  await eachLimit(files, run.jobs, async (f) => {
    const size = await existingSize(f.outputAbs);
    if (size === undefined) return;
    const prev = previous.get(f.path);
    if (
      prev &&
      (prev.status === 'ok' || prev.status === 'kept') &&
      prev.output === f.output &&
      prev.bytes === size &&
      // A collection's rows add their own cap: `total=… favour=… tile=… bytes=N`.
      (prev.settings === run.settings || prev.settings?.startsWith(`${run.settings} bytes=`)) &&
      prev.fileSha256
    ) {
      try {
        if ((await hashFile(f.inputAbs)) === prev.fileSha256) {
          state.kept.set(f.path, {
            ...prev,
            inputAbs: f.inputAbs,
            outputAbs: f.outputAbs,
            status: 'kept',
            shard: run.shardLabel,
          });
          return;
        }
      } catch {
        // Unreadable now: compress again, which reports the problem for this file.
      }
    }
    // No row (a kill between rename and journal, or a lost manifest): the worker checks the .rkf header.
    // A row that does not match (other settings, changed source): compress again.
    if (!prev || prev.status === 'failed') state.verify.add(f.path);
    else state.overwrite.add(f.path);
  });
  return state;
}
