/**
 * `clean` service: remove banding and sensor noise from a scan, keep the removed part, and report what
 * was done. Used alike by the CLI, IPC and HTTP handlers. The input file is only read; outputs are
 * written atomically and never replace an existing file without `force`.
 */

import { resolve } from 'node:path';
import {
  CancelledError,
  CLEANING_CAUTION,
  type CleanOptions,
  type CleanReport,
  checkCleanOptions,
  type DecodedImage,
  UsageError,
  type WithWarnings,
} from '../../contract';
import {
  type CleanInput,
  type DenoiseStats,
  type FinishedClean,
  finishClean,
  type PreparedClean,
  prepareClean,
} from '../../engine/clean';
import { decodeImage } from '../image/decode';
import { encodeImage, formatFromPath } from '../image/encode';
import { assertWritable, writeFileAtomic } from '../io/atomic';
import { denoiseInBands } from './clean-bands';
import { profileCsv, removedPng, type StripeProfiles } from './clean-outputs';

export interface CleanHooks {
  /** Called with a stage name and the fraction done (0–1) of the whole job. */
  onProgress?: (stage: 'decode' | 'banding' | 'denoise' | 'encode', fraction: number) => void;
  signal?: AbortSignal;
}

export interface CleanedImage {
  /** Output planes (all channels, alpha untouched), integer-valued on the source scale. */
  planes: Float32Array[];
  /** input − output per colour channel, grey levels. */
  removed: Float32Array[];
  report: CleanReport;
  /** Stripe profiles that were subtracted, per colour channel (null when that axis was not removed). */
  profile: StripeProfiles;
}

/** Check and complete options; the messages name the option. */
function normaliseCleanOptions(options: Partial<CleanOptions>): CleanOptions {
  return checkCleanOptions(options);
}

function asInput(d: DecodedImage): CleanInput {
  return { width: d.width, height: d.height, channels: d.channels, bitDepth: d.bitDepth, planes: d.planes };
}

function buildReport(
  decoded: DecodedImage,
  output: string,
  prep: PreparedClean,
  fin: FinishedClean,
  stats: DenoiseStats | null,
  workers: number,
  timings: CleanReport['timings'],
): CleanReport {
  const p = prep.params;
  const fixed = prep.fixed.rank ?? null;
  return {
    input: decoded.file,
    output,
    width: decoded.width,
    height: decoded.height,
    channels: decoded.channels,
    bitDepth: decoded.bitDepth,
    noiseSigma: prep.noiseSigma,
    noiseModel: prep.noiseModel,
    ...(prep.noiseColour ? { noiseColour: prep.noiseColour } : {}),
    noiseSource: prep.noiseSource,
    noiseSigmaMedianRule: fin.noiseSigmaMedianRule,
    threshold: fin.threshold,
    method: prep.method,
    ...(prep.noiseSkipped ? { noiseSkipped: prep.noiseSkipped } : {}),
    rank:
      stats && stats.groups > 0
        ? {
            fixed,
            groups: stats.groups,
            mean: stats.rankSum / (stats.groups * Math.max(1, prep.active.length)),
            min: stats.rankMin,
            max: stats.rankMax,
          }
        : null,
    planes: fin.noisePlanes,
    params: p
      ? { patch: p.patch, groupSize: p.groupSize, stride: p.stride, searchRadius: p.searchRadius }
      : prep.tile
        ? { tile: prep.tile }
        : null,
    banding: prep.banding,
    psnrChange: fin.psnrChange,
    changedSamples: fin.changedSamples,
    removedRms: fin.removedRms,
    workers: prep.method === 'groups' ? workers : 0,
    timings,
    caution: CLEANING_CAUTION,
  };
}

/**
 * Clean decoded planes in memory.
 * @example const { planes, removed, report } = await cleanDecoded(await decodeImage('scan.tif'), { noise: 'auto', banding: 'auto' });
 * @throws UsageError for bad options; CancelledError when `hooks.signal` aborts.
 */
export async function cleanDecoded(
  decoded: DecodedImage,
  options: Partial<CleanOptions>,
  hooks: CleanHooks = {},
): Promise<CleanedImage> {
  const opts = normaliseCleanOptions(options);
  return runClean(decoded, opts, hooks, '', 0);
}

async function runClean(
  decoded: DecodedImage,
  opts: CleanOptions,
  hooks: CleanHooks,
  output: string,
  decodeMs: number,
): Promise<CleanedImage> {
  const t0 = performance.now();
  const workers = opts.workers ?? 2;
  hooks.onProgress?.('banding', 0);
  const prep = prepareClean(asInput(decoded), opts);
  if (hooks.signal?.aborted) throw new CancelledError('cleaning');
  const t1 = performance.now();
  let stats: DenoiseStats | null = null;
  let denoised: Float32Array[] | null = null;
  if (prep.method !== 'off') {
    const r = await denoiseInBands(prep, workers, hooks);
    denoised = r.planes;
    stats = r.stats;
  }
  const t2 = performance.now();
  const fin = finishClean(asInput(decoded), prep, denoised);
  const timings = {
    decodeMs,
    bandingMs: prep.bandingMs,
    denoiseMs: t2 - t1,
    encodeMs: 0,
    totalMs: decodeMs + performance.now() - t0,
  };
  const report = buildReport(decoded, output, prep, fin, stats, workers, timings);
  return {
    planes: fin.planes,
    removed: fin.removed,
    report,
    profile: { rows: prep.rowProfiles, columns: prep.columnProfiles },
  };
}

/**
 * Clean a file: decode, remove banding and noise, write OUT with the input's bit depth and metadata, and
 * optionally the removed part (`options.removed`) and the stripe profiles (`options.profile`).
 * @throws InputError naming the input; OutputError naming an output that exists without force or cannot be written.
 */
export async function cleanFile(
  input: string,
  output: string,
  options: Partial<CleanOptions>,
  hooks: CleanHooks = {},
): Promise<CleanReport & WithWarnings> {
  const opts = normaliseCleanOptions(options);
  const outs = [output, opts.removed, opts.profile].filter((f): f is string => Boolean(f));
  for (const f of outs)
    if (resolve(f) === resolve(input))
      throw new UsageError(
        `${f}: is the input file; Rankfold never overwrites its input. Choose another output name.`,
      );
  if (new Set(outs.map((f) => resolve(f))).size !== outs.length)
    throw new UsageError('The output, --removed and --profile files must be different files.');
  formatFromPath(output); // an unknown extension fails now, not after the work
  if (opts.removed && !/\.png$/i.test(opts.removed))
    throw new UsageError(
      `${opts.removed}: the removed part is written as PNG; give a file name ending in .png`,
    );
  for (const f of outs) await assertWritable(f, opts.force);
  const t0 = performance.now();
  hooks.onProgress?.('decode', 0);
  const decoded = await decodeImage(input, { page: opts.page, pixelLimit: opts.pixelLimit });
  const decodeMs = performance.now() - t0;
  const result = await runClean(decoded, opts, hooks, output, decodeMs);
  if (hooks.signal?.aborted) throw new CancelledError('cleaning');
  const t1 = performance.now();
  hooks.onProgress?.('encode', 0);
  await encodeImage(
    output,
    {
      width: decoded.width,
      height: decoded.height,
      channels: decoded.channels,
      bitDepth: decoded.bitDepth,
      planes: result.planes,
      meta: decoded.meta,
    },
    { force: opts.force },
  );
  const report = result.report;
  if (opts.removed) {
    const { bytes, scale } = await removedPng(
      result.removed,
      decoded.width,
      decoded.height,
      decoded.bitDepth,
    );
    await writeFileAtomic(opts.removed, bytes, { force: opts.force });
    report.removed = opts.removed;
    report.removedScale = scale;
  }
  if (opts.profile) {
    await writeFileAtomic(
      opts.profile,
      profileCsv(result.profile, decoded.width, decoded.height, report.noiseModel),
      {
        force: opts.force,
      },
    );
    report.profile = opts.profile;
  }
  report.timings.encodeMs = performance.now() - t1;
  report.timings.totalMs = performance.now() - t0;
  hooks.onProgress?.('encode', 1);
  return decoded.warnings ? { ...report, warnings: decoded.warnings } : report;
}
