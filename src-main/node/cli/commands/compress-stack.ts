/**
 * `rankfold compress --stack IN_DIR|IN.tif -o OUT.rkf`: code a series of same-size frames jointly
 * (stack mode). Called by compress.ts when `--stack` is present.
 */
import {
  type Budget,
  LOSSY_CAUTION,
  OPTIONS,
  parseOptionText,
  rangeText,
  type StackCompressOptions,
  type StackReport,
  UsageError,
} from '../../../contract';
import { compressStackFile } from '../../services/stack';
import { BUDGET_OPTIONS, parseBudgetOptions } from '../args/budget-options';
import { type CliIO, flags, parseCommandArgs } from '../args/command';

const options = { ...BUDGET_OPTIONS, ...flags('output frames pixel-limit', 'stack no-residuals json force') };

export const stackHelp = `Usage: rankfold compress --stack IN_DIR|IN.tif -o OUT.rkf (--budget SIZE | --bpp X | --rank K | --min-psnr DB | --min-ssim S) [options]

Code a series of same-size frames (time-lapse, serial sections, pages of one form, bracketed
exposures) jointly: the mean frame, a few eigen-frames shared by all frames, per-frame weights, and a
per-frame residual where it pays. One frame can be expanded without decoding the others.

Input: a folder of frames, taken in natural name order (frame-2 before frame-10), or a multi-page TIFF.
All frames must have the same size, bit depth (8 or 16) and colour model (gray or RGB).

Budgets, for the whole series:
  --budget SIZE     at most SIZE on disk: 250kB, 1.5MB, 2MiB, 120000 (bytes) or 5% of the raw samples
  --bpp X           at most X bits per pixel on disk, counted over all frames
  --rank K          keep K eigen-frames per channel (${rangeText(OPTIONS.stackRank)}), finely quantised, no residuals
  --min-psnr DB     every frame's PSNR at least DB (the worst frame must meet it); the smallest file found.
                    May be combined with --budget or --bpp: then both must hold.
  --min-ssim S      every frame's SSIM (Wang et al. 2004) at least S

Options:
  -o, --output FILE   output .rkf file (required)
  --frames GLOB       only the files of the folder whose names match GLOB, e.g. 'plate-*.tif'
  --no-residuals      code the shared model only (no per-frame residuals)
  --pixel-limit N     refuse frames with more pixels than N (default 268402689)
  --json              print the report as one JSON object: per-frame PSNR/SSIM, the frame-mode
                      spectrum, and the bytes spent on basis against coefficients
  --force             overwrite an existing output

The input is never modified; the output is written atomically and never overwritten without --force.
A frame of a different size, bit depth or colour model stops the run with its name; nothing is written.

${LOSSY_CAUTION}
`;

/** The budget and floors: --min-psnr and --min-ssim may join --budget or --bpp, and --rank is 0–64. */
function targetFrom(v: Record<string, unknown>): StackCompressOptions {
  const o: StackCompressOptions = {};
  let budget: Budget | undefined;
  for (const b of parseBudgetOptions(v, {
    prefix: 'compress --stack: ',
    missing:
      'compress --stack: give a budget: --budget SIZE, --bpp X, --rank K, --min-psnr DB or --min-ssim S. See `rankfold compress --help`.',
    rank: OPTIONS.stackRank,
    floorsCombine: true,
  })) {
    if (b.kind === 'psnr') o.minPsnr = b.db;
    else if (b.kind === 'ssim') o.minSsim = b.value;
    else budget = b;
  }
  o.budget = budget;
  return o;
}

const fmt = (x: number, d = 2) =>
  Number.isFinite(x) ? x.toFixed(d) : x === Number.POSITIVE_INFINITY ? '∞' : 'n/a';

/** A frame as the text report names it: counted from 1, as the app and `expand --frame` count. */
const frameNumber = (index: number, frames: number) =>
  index >= 0 ? `frame ${index + 1} of ${frames}` : 'no frame';

export function formatStackReport(r: StackReport): string {
  const lines = [
    `${r.input} → ${r.output} (stack of ${r.frames} frames)`,
    `  ${r.width}×${r.height}, ${r.channels === 3 ? 'colour' : 'gray'}, ${r.bitDepth}-bit`,
    `  raw ${r.rawBytes} B, input files ${r.inputBytes} B, output ${r.outputBytes} B: ratio ${fmt(r.ratio, 1)}:1, ${fmt(r.bpp, 3)} bpp`,
    `  bytes: basis ${r.bytes.basis} (mean frame ${r.bytes.mean}, eigen-frames ${r.bytes.eigenFrames}), coefficients ${r.bytes.coefficients}, residuals ${r.bytes.residuals}, overhead ${r.bytes.overhead}`,
  ];
  for (const s of r.spectrum)
    lines.push(
      `  ${s.channel}: ${s.stored} eigen-frame(s) stored; ${s.eigenFramesFor['90%']} carry 90% of the variation, ${s.eigenFramesFor['99%']} carry 99%` +
        ` (σ ${s.sigma
          .slice(0, 6)
          .map((x) => fmt(x, 0))
          .join(', ')}${s.sigma.length > 6 ? ', …' : ''})`,
    );
  lines.push(
    `  measured on the decoded file: PSNR worst ${fmt(r.psnr.worst)} dB (${frameNumber(r.psnr.worstFrame, r.frames)}), mean ${fmt(r.psnr.mean)} dB; SSIM worst ${fmt(r.ssim.worst, 4)}, mean ${fmt(r.ssim.mean, 4)}`,
    `  frames with their own residual: ${r.perFrame.filter((f) => f.residual).length} of ${r.frames}`,
    `  time: decode ${fmt(r.timings.decodeMs, 0)} ms, factor ${fmt(r.timings.factorMs, 0)} ms, encode ${fmt(r.timings.encodeMs, 0)} ms`,
  );
  return `${lines.join('\n')}\n`;
}

/** Entry from compress.ts when `--stack` is given. Returns the exit code. */
export async function runStack(argv: string[], io: CliIO): Promise<number> {
  const { values: v, positionals } = parseCommandArgs('compress', argv, options);
  const input = positionals[0];
  if (!input)
    throw new UsageError(
      'compress --stack: missing input folder or multi-page TIFF. See `rankfold compress --help`.',
    );
  const output = v.output as string | undefined;
  if (!output) throw new UsageError('compress --stack: missing -o OUT.rkf. See `rankfold compress --help`.');
  const o = targetFrom(v);
  o.frames = v.frames as string | undefined;
  o.force = Boolean(v.force);
  o.residuals = v['no-residuals'] ? false : undefined;
  if (v['pixel-limit'] !== undefined)
    o.pixelLimit = parseOptionText(OPTIONS.pixelLimit, v['pixel-limit'] as string);
  let last = -1;
  const report = await compressStackFile(input, output, o, {
    onProgress: ({ fraction }) => {
      const pct = Math.floor(fraction * 100);
      if (io.isTTY && !v.json && pct !== last) {
        last = pct;
        io.stderr(`\rcompress --stack: ${pct}%`);
      }
    },
  });
  if (io.isTTY && !v.json && last >= 0) io.stderr('\r\x1b[K');
  if (v.json) io.stdout(`${JSON.stringify(report)}\n`);
  else io.stdout(formatStackReport(report));
  io.stderr(`${LOSSY_CAUTION}\n`);
  return 0;
}
