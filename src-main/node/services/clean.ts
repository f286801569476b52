/**
 * `clean` service: remove banding and sensor noise from a scan, keep the removed part, and report what
 * was done. Used alike by the CLI, IPC and HTTP handlers. The input file is only read; outputs are
 * written atomically and never replace an existing file without `force`.
 */

import { existsSync } from 'node:fs';
import { dirname, join, resolve } from 'node:path';
import { fileURLToPath } from 'node:url';
import { Worker } from 'node:worker_threads';
import sharp from 'sharp';
import {
  CancelledError,
  type CleanOptions,
  type CleanReport,
  checkCleanOptions,
  type DecodedImage,
  fromErrorPayload,
  RankfoldError,
  UsageError,
  type WithWarnings,
} from '../../contract';
import {
  type CleanInput,
  type DenoiseStats,
  denoiseInProcess,
  type FinishedClean,
  finishClean,
  mergeStats,
  type PreparedClean,
  prepareClean,
  rowBands,
  withPassThrough,
} from '../../engine/clean';
import { crc32 } from '../../engine/codec/crc32';
import { decodeImage } from '../image/decode';
import { encodeImage, formatFromPath } from '../image/encode';
import { assertWritable, writeFileAtomic } from '../io/atomic';
import type { CleanWorkerData, CleanWorkerMessage } from '../workers/clean';

/** The caution carried in every report (same text as the CLI's CLEANING_CAUTION). */
export const CLEAN_REPORT_CAUTION =
  'Cleaning alters pixel data. Keep the original and the removed part where your institution requires it; never clean preservation masters, medical, forensic or legal images without approval.';

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
  profile: { rows: Float64Array[] | null; columns: Float64Array[] | null };
}

/** Check and complete options; the messages name the option. */
export function normaliseCleanOptions(options: Partial<CleanOptions>): CleanOptions {
  return checkCleanOptions(options);
}

/** Where the built worker lives: beside the running bundle (dist/cli.js) or, from sources, in dist/. */
export function cleanWorkerFile(): string {
  const here = dirname(fileURLToPath(import.meta.url));
  const candidates = [
    join(here, 'workers', 'clean.js'),
    join(here, '..', 'workers', 'clean.js'),
    resolve(here, '..', '..', '..', 'dist', 'workers', 'clean.js'),
  ];
  const found = candidates.find((c) => existsSync(c));
  if (!found)
    throw new RankfoldError(
      'the clean worker (dist/workers/clean.js) is missing; run `npm run build` in the Rankfold folder, or pass workers: 0',
    );
  return found;
}

/** Denoise the prepared planes with `workers` threads over row bands (0 = this thread). */
async function denoise(
  prep: PreparedClean,
  workers: number,
  hooks: CleanHooks,
): Promise<{ planes: Float32Array[]; stats: DenoiseStats }> {
  const report = (f: number) => hooks.onProgress?.('denoise', f);
  if (workers === 0 || prep.method === 'tiles') {
    if (hooks.signal?.aborted) throw new CancelledError('cleaning');
    return denoiseInProcess(prep, 1, report);
  }
  const { width, height } = prep;
  const n = width * height;
  const planes = prep.active.map((c) => prep.work[c]);
  const input = planes.map((p) => {
    const b = new SharedArrayBuffer(n * 4);
    new Float32Array(b).set(p);
    return b;
  });
  const output = planes.map(() => new SharedArrayBuffer(n * 4));
  const file = cleanWorkerFile();
  const bands = rowBands(height, workers);
  const fractions = bands.map(() => 0);
  const running: Worker[] = [];
  const stop = () => {
    for (const w of running) void w.terminate();
  };
  try {
    const stats = await Promise.all(
      bands.map(
        ([rowStart, rowEnd], i) =>
          new Promise<DenoiseStats>((resolveBand, rejectBand) => {
            if (hooks.signal?.aborted) return rejectBand(new CancelledError('cleaning'));
            const workerData: CleanWorkerData = {
              width,
              height,
              input,
              output,
              sigmas: prep.active.map((c) => prep.sigmas[c]),
              params: prep.params!,
              rowStart,
              rowEnd,
            };
            const w = new Worker(file, { workerData });
            running.push(w);
            let settled = false;
            const onAbort = () => {
              settled = true;
              void w.terminate();
              rejectBand(new CancelledError('cleaning'));
            };
            hooks.signal?.addEventListener('abort', onAbort, { once: true });
            w.on('message', (m: CleanWorkerMessage) => {
              if (m.type === 'progress') {
                fractions[i] = m.fraction;
                report(fractions.reduce((a, b) => a + b, 0) / bands.length);
              } else if (m.type === 'done') {
                settled = true;
                hooks.signal?.removeEventListener('abort', onAbort);
                void w.terminate();
                resolveBand(m.stats);
              } else {
                settled = true;
                hooks.signal?.removeEventListener('abort', onAbort);
                void w.terminate();
                rejectBand(fromErrorPayload(m.error));
              }
            });
            w.on('error', (err) => {
              if (settled) return;
              settled = true;
              rejectBand(new RankfoldError(`the clean worker failed: ${err.message}`));
            });
            w.on('exit', (code) => {
              if (!settled) {
                settled = true;
                rejectBand(new RankfoldError(`the clean worker stopped unexpectedly (exit code ${code})`));
              }
            });
          }),
      ),
    );
    return {
      planes: withPassThrough(
        prep,
        output.map((b) => new Float32Array(b)),
      ),
      stats: mergeStats(stats),
    };
  } catch (err) {
    stop();
    throw err;
  }
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
    caution: CLEAN_REPORT_CAUTION,
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
    const r = await denoise(prep, workers, hooks);
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
    await writeFileAtomic(opts.profile, profileCsv(result.profile, decoded.width, decoded.height), {
      force: opts.force,
    });
    report.profile = opts.profile;
  }
  report.timings.encodeMs = performance.now() - t1;
  report.timings.totalMs = performance.now() - t0;
  hooks.onProgress?.('encode', 1);
  return decoded.warnings ? { ...report, warnings: decoded.warnings } : report;
}

/**
 * The removed part as an 8-bit PNG: grey = 128 + scale·removed, clipped to 0–255. The scale maps 4× the
 * RMS of the removed part (at least one grey level of the input) to ±127, so noise and stripes are
 * visible; it is stated in the report and in a PNG tEXt chunk (keyword "Comment").
 */
export async function removedPng(removed: Float32Array[], width: number, height: number, bitDepth: 8 | 16) {
  let sq = 0;
  for (const p of removed) for (let i = 0; i < p.length; i++) sq += p[i] * p[i];
  const rms = Math.sqrt(sq / (removed.length * width * height));
  const scale = 127 / Math.max(4 * rms, 1);
  const ch = removed.length;
  const buf = Buffer.alloc(width * height * ch);
  for (let i = 0, o = 0; i < width * height; i++)
    for (let c = 0; c < ch; c++, o++)
      buf[o] = Math.max(0, Math.min(255, Math.round(128 + scale * removed[c][i])));
  const png = await sharp(buf, { raw: { width, height, channels: ch as 1 | 3 } })
    .png()
    .toBuffer();
  const text = `Rankfold removed part: grey = 128 + ${scale.toPrecision(6)} x (input - output), input in ${bitDepth}-bit grey levels; RMS removed ${rms.toPrecision(6)}`;
  return { bytes: insertPngText(png, 'Comment', text), scale };
}

/** Insert a tEXt chunk after IHDR (PNG spec, ISO/IEC 15948:2004 §11.3.4.3). */
export function insertPngText(png: Buffer, keyword: string, text: string): Buffer {
  const data = Buffer.from(`${keyword}\0${text}`, 'latin1');
  const chunk = Buffer.alloc(12 + data.length);
  chunk.writeUInt32BE(data.length, 0);
  chunk.write('tEXt', 4, 'latin1');
  data.copy(chunk, 8);
  chunk.writeUInt32BE(crc32(chunk.subarray(4, 8 + data.length)), 8 + data.length);
  const ihdrEnd = 8 + 8 + 13 + 4;
  return Buffer.concat([png.subarray(0, ihdrEnd), chunk, png.subarray(ihdrEnd)]);
}

/** CSV of the subtracted stripe profiles: `axis,index,<channel…>`, offsets in grey levels of the input. */
export function profileCsv(profile: CleanedImage['profile'], width: number, height: number): string {
  const ch = (profile.rows ?? profile.columns)?.length ?? 1;
  const names = ch === 3 ? ['R', 'G', 'B'] : ['gray'];
  const lines = [`axis,index,${names.join(',')}`];
  if (profile.rows)
    for (let y = 0; y < height; y++)
      lines.push(`row,${y},${profile.rows.map((p) => p[y].toFixed(4)).join(',')}`);
  if (profile.columns)
    for (let x = 0; x < width; x++)
      lines.push(`column,${x},${profile.columns.map((p) => p[x].toFixed(4)).join(',')}`);
  return `${lines.join('\n')}\n`;
}
