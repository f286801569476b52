/**
 * Stack mode as a service: read a series (a folder of same-size frames in natural name order, or a
 * multi-page TIFF), code it jointly into one .rkf file with the stack layout, and decode one frame or
 * all of them. Used by the CLI (`compress --stack`, `expand --frame`) and, in memory, by the app.
 */
import { readFile } from 'node:fs/promises';
import { extname, join } from 'node:path';
import { performance } from 'node:perf_hooks';
import sharp, { type SharpOptions } from 'sharp';
import {
  type Budget,
  checkStackOptions,
  FormatError,
  OutputError,
  type StackCompressOptions,
  type StackExpandReport,
  type StackReport,
  type StackSpectrum,
  UsageError,
} from '../../contract';
import { readImageHeader } from '../../engine/codec/image-file';
import {
  fitStack,
  type StackFit,
  type StackTarget,
  StackTargetError,
  withFrameQuality,
} from '../../engine/codec/stack-budget';
import { isStackContainer } from '../../engine/codec/stack-codec';
import { MAX_STACK_RANK, type PreparedStack, type StackInput } from '../../engine/codec/stack-header';
import {
  decodeStackFrame as decodeFrameBytes,
  openStack,
  prepareStack,
} from '../../engine/lowrank/stack-frames';
import { encodeImage, formatFromPath } from '../image/encode';
import { describeFileError } from '../image/open-file';
import { assertWritable, writeFileAtomic } from '../io/atomic';
import { checkSeries, loadStack, type StackFrame } from './stack-series';
import { StackThreads, stackThreads } from './stack-threads';

function targetFrom(input: StackInput, o: StackCompressOptions): StackTarget {
  const raw = input.width * input.height * input.channels * input.frames.length * (input.bitDepth / 8);
  const t: StackTarget = { minPsnr: o.minPsnr, minSsim: o.minSsim, residuals: o.residuals };
  const b: Budget | undefined = o.budget;
  if (b) {
    switch (b.kind) {
      case 'rank':
        if (!(Number.isInteger(b.rank) && b.rank >= 0 && b.rank <= MAX_STACK_RANK))
          throw new UsageError(
            `Expected integer between 0 and ${MAX_STACK_RANK} for rank (eigen-frames per channel) but received ${b.rank}`,
          );
        t.rank = Math.min(b.rank, input.frames.length);
        break;
      case 'bytes':
        t.maxBytes = b.bytes;
        break;
      case 'percent':
        t.maxBytes = Math.floor((raw * b.percent) / 100);
        break;
      case 'bpp':
        t.maxBytes = Math.floor((b.bpp * input.width * input.height * input.frames.length) / 8);
        break;
      case 'psnr':
        t.minPsnr = Math.max(t.minPsnr ?? 0, b.db);
        break;
      case 'ssim':
        t.minSsim = Math.max(t.minSsim ?? 0, b.value);
        break;
    }
  }
  if (t.minSsim !== undefined && (input.width < 11 || input.height < 11))
    throw new UsageError(
      `compress --stack: frames of ${input.width}×${input.height} are smaller than the 11×11 SSIM window (Wang et al. 2004); use --min-psnr instead`,
    );
  if (t.maxBytes === undefined && t.minPsnr === undefined && t.minSsim === undefined && t.rank === undefined)
    throw new UsageError(
      'compress --stack: give a budget (--rank K, --budget SIZE, --bpp X, --min-psnr DB or --min-ssim S)',
    );
  return t;
}

function spectrumOf(sigma: number[], channel: string, stored: number): StackSpectrum {
  const e = sigma.map((s) => s * s);
  const total = e.reduce((a, b) => a + b, 0);
  let acc = 0;
  const cumulativeEnergy = e.map((v) => {
    acc += v;
    return total > 0 ? Number((acc / total).toFixed(6)) : 1;
  });
  const need = (f: number) =>
    total === 0 ? 0 : cumulativeEnergy.findIndex((c) => c >= f) + 1 || sigma.length;
  return {
    channel,
    sigma,
    cumulativeEnergy,
    eigenFramesFor: { '90%': need(0.9), '99%': need(0.99), '99.9%': need(0.999) },
    stored,
  };
}

function worstAndMean(v: number[]) {
  if (v.some((x) => Number.isNaN(x))) return { worst: Number.NaN, mean: Number.NaN, worstFrame: -1 };
  let worst = Number.POSITIVE_INFINITY;
  let worstFrame = 0;
  let sum = 0;
  v.forEach((x, j) => {
    if (x < worst) {
      worst = x;
      worstFrame = j;
    }
    sum += x;
  });
  return { worst, mean: sum / v.length, worstFrame };
}

export interface StackHooks {
  onProgress?(p: { stage: string; fraction: number }): void;
}

/** Prepare a series, or refuse it with a UsageError. */
function prepared(input: StackInput, transformed?: Float64Array[][]) {
  try {
    return prepareStack(input, MAX_STACK_RANK, transformed);
  } catch (err) {
    throw new UsageError(`compress --stack: ${(err as Error).message}`);
  }
}

/** Fit a prepared series to its target; a target that cannot be met is a UsageError. */
function fitted(prep: PreparedStack, target: StackTarget, hooks: StackHooks, deferQuality = false): StackFit {
  const onProgress = (f: number) => hooks.onProgress?.({ stage: 'encode', fraction: f });
  try {
    return fitStack(prep, target, onProgress, { deferQuality });
  } catch (err) {
    if (err instanceof StackTargetError) throw new UsageError(`compress --stack: ${err.message}`);
    throw err;
  }
}

type StackNames = { input?: string; output?: string; inputBytes?: number; decodeMs?: number };

/**
 * Compress an in-memory series (the app's API), on this thread. Returns the .rkf bytes and the report
 * (input/output names empty unless given).
 * @throws InputError for mismatched frames, UsageError for a target that cannot be met.
 */
export function compressStack(
  frames: StackFrame[],
  options: StackCompressOptions,
  names: StackNames = {},
  hooks: StackHooks = {},
): { bytes: Uint8Array; report: StackReport } {
  checkStackOptions(options);
  const input = checkSeries(frames);
  const target = targetFrom(input, options);
  const t0 = performance.now();
  const prep = prepared(input);
  const t1 = performance.now();
  const fit = fitted(prep, target, hooks);
  return { bytes: fit.encoded.bytes, report: reportOf(input, fit, names, t1 - t0, performance.now() - t1) };
}

/** The report of a fitted series. */
function reportOf(
  input: StackInput,
  fit: StackFit,
  names: StackNames,
  factorMs: number,
  encodeMs: number,
): StackReport {
  const e = fit.encoded;
  const N = input.frames.length;
  const raw = input.width * input.height * input.channels * N * (input.bitDepth / 8);
  const channelNames = input.channels === 3 ? ['Y', 'Cb', 'Cr'] : ['gray'];
  const report: StackReport = {
    input: names.input ?? '',
    output: names.output ?? '',
    layout: 'stack',
    frames: N,
    width: input.width,
    height: input.height,
    channels: input.channels,
    bitDepth: input.bitDepth,
    rawBytes: raw,
    inputBytes: names.inputBytes ?? 0,
    outputBytes: e.bytes.length,
    ratio: raw / e.bytes.length,
    bpp: (8 * e.bytes.length) / (input.width * input.height * N),
    step: e.header.step,
    bytes: {
      basis: e.split.mean + e.split.basis,
      mean: e.split.mean,
      eigenFrames: e.split.basis,
      coefficients: e.split.coefficients,
      residuals: e.split.residuals,
      overhead: e.split.header + e.split.container,
    },
    spectrum: e.header.spectrum.map((s, c) => spectrumOf(s, channelNames[c], e.header.ranks[c])),
    psnr: worstAndMean(fit.psnr),
    ssim: worstAndMean(fit.ssim),
    perFrame: input.frames.map((f, j) => ({
      index: j,
      name: f.name ?? `frame ${j}`,
      sourceSha256: f.sourceSha256 ?? '',
      psnr: fit.psnr[j],
      ssim: fit.ssim[j],
      residual: e.header.frameTable[j].residual.some(Boolean),
    })),
    timings: { decodeMs: names.decodeMs ?? 0, factorMs, encodeMs },
  };
  return report;
}

/** Decode frame `i` of an in-memory stack file (the app's frame slider). @throws FormatError. */
export function decodeStackFrame(bytes: Uint8Array, i: number, file = 'stack'): Float32Array[] {
  return decodeFrameBytes(bytes, i, file);
}

/**
 * `compress --stack`: read a folder or multi-page TIFF, code it jointly, write OUT.rkf atomically.
 * Nothing is written when a frame is refused or the target cannot be met.
 */
export async function compressStackFile(
  source: string,
  output: string,
  options: StackCompressOptions,
  hooks: StackHooks = {},
): Promise<StackReport> {
  await assertWritable(output, options.force);
  // The worker starts loading while the frames decode.
  const threads = StackThreads.start(stackThreads());
  try {
    const t0 = performance.now();
    const loaded = await loadStack(source, { frames: options.frames, pixelLimit: options.pixelLimit });
    const decodeMs = performance.now() - t0;
    checkStackOptions(options);
    const input = threads.share(checkSeries(loaded.frames));
    const target = targetFrom(input, options);
    const t1 = performance.now();
    // The frames' wavelet transforms on both threads, then the frame-mode SVD and the rate control here.
    const prep = prepared(input, await threads.transform());
    const t2 = performance.now();
    let fit = fitted(prep, target, hooks, true);
    if (!fit.psnr.length) {
      const q = await threads.measure(fit.encoded.bytes, true, fit.encoded.frameOf());
      fit = withFrameQuality(fit, q.psnr, q.ssim);
    }
    const names = { input: source, output, inputBytes: loaded.inputBytes, decodeMs };
    const report = reportOf(input, fit, names, t2 - t1, performance.now() - t2);
    await writeFileAtomic(output, fit.encoded.bytes, { force: options.force });
    return report;
  } finally {
    await threads.close();
  }
}

async function readStackFile(file: string) {
  let bytes: Uint8Array;
  try {
    bytes = new Uint8Array(await readFile(file));
  } catch (err) {
    throw describeFileError(file, err);
  }
  return openStack(bytes, file);
}

/**
 * `expand` of a stack file: one frame (`frame`), or every frame into a folder of numbered PNG files
 * (or TIFF when the folder name is given with --format tiff), or into one multi-page TIFF when
 * `output` ends in .tif/.tiff. The input is validated before the output is looked at (a damaged file is
 * reported as such, whatever the output name), and nothing is written if it fails.
 */
export async function expandStackFile(
  file: string,
  output: string,
  options: { frame?: number; force?: boolean } = {},
): Promise<StackExpandReport> {
  const reader = await readStackFile(file);
  const h = reader.header;
  const ext = extname(output).toLowerCase();
  const isTiff = ext === '.tif' || ext === '.tiff';
  const base = {
    input: file,
    width: h.width,
    height: h.height,
    channels: h.channels,
    bitDepth: h.bitDepth,
  };
  const source = (j: number) => ({
    index: j,
    name: h.frameTable[j].name,
    sourceSha256: h.frameTable[j].sourceSha256,
  });
  if (options.frame !== undefined) {
    if (options.frame >= h.frameCount)
      throw new UsageError(
        `${file}: frame ${options.frame + 1} does not exist; the stack holds frames 1–${h.frameCount}`,
      );
    // Random access: only the chunks of this frame are read and checked.
    const planes = reader.frame(options.frame);
    const format = formatFromPath(output);
    await encodeImage(
      output,
      { width: h.width, height: h.height, channels: h.channels, bitDepth: h.bitDepth, planes },
      {
        force: options.force,
        format,
      },
    );
    return { ...base, frames: [options.frame], outputs: [output], format, sources: [source(options.frame)] };
  }
  const all = Array.from({ length: h.frameCount }, (_, j) => j);
  // Every chunk's CRC is checked before any output name is looked at, and every frame decodes before
  // anything is written.
  reader.verify();
  if (ext === '.png' || ext === '.jpg' || ext === '.jpeg' || ext === '.webp')
    throw new UsageError(
      `expand: ${output} is a single image file, but ${file} holds ${h.frameCount} frames; give --frame I, a folder, or a .tif for one multi-page TIFF`,
    );
  if (isTiff) {
    const n = h.width * h.height;
    const ch = h.channels;
    const samples =
      h.bitDepth === 16 ? new Uint16Array(n * ch * h.frameCount) : new Uint8Array(n * ch * h.frameCount);
    for (const j of all) {
      const planes = reader.frame(j);
      const o = j * n * ch;
      for (let p = 0; p < n; p++) for (let c = 0; c < ch; c++) samples[o + p * ch + c] = planes[c][p];
    }
    await assertWritable(output, options.force);
    const space = ch === 1 ? (h.bitDepth === 16 ? 'grey16' : 'b-w') : h.bitDepth === 16 ? 'rgb16' : 'srgb';
    let tiff: Buffer;
    try {
      tiff = await sharp(samples, {
        raw: { width: h.width, height: h.height * h.frameCount, channels: ch as 1 | 3, pageHeight: h.height },
        limitInputPixels: false,
      } as SharpOptions)
        .toColourspace(space)
        .tiff({ compression: 'deflate', predictor: 'horizontal' })
        .toBuffer();
    } catch (err) {
      throw new OutputError(output, `cannot be encoded as a multi-page TIFF (${(err as Error).message})`);
    }
    await writeFileAtomic(output, tiff, { force: options.force });
    return { ...base, frames: all, outputs: [output], format: 'tiff', sources: all.map(source) };
  }
  // A folder of numbered PNG files, written only once every frame has decoded.
  const decoded = all.map((j) => reader.frame(j));
  const digits = Math.max(3, String(h.frameCount).length);
  const outputs = all.map((j) => join(output, `frame-${String(j + 1).padStart(digits, '0')}.png`));
  for (const o of outputs) await assertWritable(o, options.force);
  for (const j of all)
    await encodeImage(
      outputs[j],
      { width: h.width, height: h.height, channels: h.channels, bitDepth: h.bitDepth, planes: decoded[j] },
      {
        force: options.force,
        format: 'png',
      },
    );
  return { ...base, frames: all, outputs, format: 'png', sources: all.map(source) };
}

/**
 * The damage of a .rkf file of either layout, if it has any that reading its structure finds (every chunk's
 * CRC-32, the version, the header, the chunk set), else undefined. `expand` asks when it is about to refuse
 * the output, so that a damaged input is reported as such rather than as an output problem.
 */
export async function containerDamage(file: string): Promise<FormatError | undefined> {
  let bytes: Uint8Array;
  try {
    bytes = new Uint8Array(await readFile(file));
  } catch {
    return undefined;
  }
  try {
    if (isStackContainer(bytes, file)) openStack(bytes, file).verify();
    else readImageHeader(bytes, file);
  } catch (err) {
    if (err instanceof FormatError) return err;
  }
  return undefined;
}

/**
 * True when `file` is a .rkf file whose header says `layout: "stack"` (only the header is read and
 * checked), so that the stack reader — with its precise messages — handles it even when it is damaged.
 */
export async function isStackFile(file: string): Promise<boolean> {
  try {
    return isStackContainer(new Uint8Array(await readFile(file)), file);
  } catch {
    return false;
  }
}
