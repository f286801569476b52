/** `rankfold compress IN -o OUT.rkf`: write a .rkf file that meets a storage budget or a quality floor. */
import {
  type CompressReport,
  LOSSY_CAUTION,
  OPTIONS,
  parseOptionText,
  rangeText,
  UsageError,
} from '../../../contract';
import { compressFile } from '../../services/compress';
import { parseBudgetOrLossless, parseTileOption } from '../args/budget-options';
import { type CliIO, type Command, parseCommandArgs } from '../args/command';
import { COMPRESS_OPTIONS } from '../args/compress-options';

const help = `Usage: rankfold compress IN -o OUT.rkf (--rank K | --budget SIZE | --bpp X | --min-psnr DB | --min-ssim S | --lossless) [options]

Write a Rankfold container (.rkf) holding a truncated SVD of the scan, whole or in tiles, that meets
one budget. Figures are measured on the file as written, decoded again.

Budgets (give exactly one):
  --rank K          keep K singular components per plane (per tile when tiled)
  --budget SIZE     at most SIZE on disk: 250kB, 1.5MB, 2MiB, 120000 (bytes) or 5% of the raw samples
  --bpp X           at most X bits per pixel on disk
  --min-psnr DB     the smallest file found whose PSNR is at least DB (MAX = 255 or 65535)
  --min-ssim S      the smallest file found whose SSIM (Wang et al. 2004) is at least S
  --lossless        a lossless file: it expands to exactly the samples of the scan (checked by its
                    SHA-256). With --budget or --bpp as well, it must also fit that size. Without
                    --lossless, a budget that the lossless file fits (or a floor whose lossy file would be
                    no smaller) gets the lossless file too

Options:
  -o, --output FILE   output .rkf file (required)
  --tile N|auto|0     tile side ${rangeText(OPTIONS.tile)}, auto (best of 32, 64, 128 for the budget) or 0 for whole planes.
                      Default: auto (whole planes with --rank)
  --layers auto|base  auto (default): under --budget or --bpp, the low-rank base plus a wavelet-coded
                      residual layer, split by the least error at the budget (rank 0 and no residual are
                      among the splits tried); base: the low-rank factors only. --rank, --min-psnr and
                      --min-ssim always write the base only, as do scans over 2^25 pixels
  --page N            TIFF page to read, from 0 (default 0)
  --pixel-limit N     refuse inputs with more pixels than N (default 268402689)
  --workers N         threads for one encode, ${rangeText(OPTIONS.workers)} (default ${OPTIONS.workers.default}): 2 or more add one
                      thread for the parts that split in two; the output is identical for any number
  --compare           also encode JPEG (mozjpeg), WebP and AVIF at the nearest size ≤ ours, and report them
  --json              print the report as one JSON object
  --force             overwrite an existing output
  --stack             compress a folder or multi-page TIFF of frames jointly (stack mode)

The input is never modified; the output is written atomically and never overwritten without --force.

${LOSSY_CAUTION}
`;

const fmt = (x: number, d = 2) =>
  Number.isFinite(x) ? x.toFixed(d) : x === Number.POSITIVE_INFINITY ? '∞' : 'n/a';

export function formatReport(r: CompressReport): string {
  const ranks = r.ranks
    .map((c) =>
      c.rank !== undefined
        ? `${c.channel} rank ${c.rank}`
        : `${c.channel} ${c.tiles?.count} tiles of ${r.tile}px, rank ${c.tiles?.min}–${c.tiles?.max} (mean ${fmt(c.tiles?.mean ?? 0, 1)})`,
    )
    .join('; ');
  const lines = [
    `${r.input} → ${r.output}`,
    `  ${r.width}×${r.height}, ${r.channels} channel(s), ${r.bitDepth}-bit`,
    `  raw ${r.rawBytes} B, input file ${r.inputBytes} B, output ${r.outputBytes} B: ratio ${fmt(r.ratio, 1)}:1, ${fmt(r.bpp, 3)} bpp`,
    `  ranks: ${ranks || 'none (a lossless file has no low-rank base)'}`,
    `  measured on the decoded file: PSNR ${fmt(r.psnr)} dB, SSIM ${fmt(r.ssim, 4)}${r.lossless ? ' (lossless: decodes to the source samples exactly)' : ''}`,
    ...layerLines(r),
    `  ${r.layers?.residualBytes ? 'base layer: ' : ''}Frobenius error ${fmt(r.errors.frobenius, 1)} grey levels (Eckart–Young optimum at these ranks ${fmt(r.errors.frobeniusOptimal, 1)}; spectral bound σ_k+1 ${fmt(r.errors.spectralBound, 1)})`,
    `  time: decode ${fmt(r.timings.decodeMs, 0)} ms, factor ${fmt(r.timings.factorMs, 0)} ms, encode ${fmt(r.timings.encodeMs, 0)} ms`,
  ];
  if (r.compare) {
    lines.push('  at the nearest size ≤ ours:');
    for (const c of r.compare) {
      const better = c.psnr > r.psnr ? '  ← better PSNR than Rankfold here' : '';
      lines.push(
        `    ${c.codec.padEnd(5)} q${String(c.quality).padStart(3)} ${String(c.bytes).padStart(9)} B  PSNR ${fmt(c.psnr)} dB  SSIM ${fmt(c.ssim, 4)}${c.fits === false ? '  (even quality 1 is larger than ours)' : ''}${better}`,
      );
    }
  }
  return `${lines.join('\n')}\n`;
}

function layerLines(r: CompressReport): string[] {
  const l = r.layers;
  if (l?.chosen === 'lossless')
    return [`  layers: one lossless layer of ${l.losslessBytes} B (no low-rank base, no residual)`];
  if (!l || (!l.residualBytes && !l.candidates.length)) return [];
  const steps = l.residualSteps.map((s) => (s === null ? '–' : fmt(s, 3))).join(', ');
  const tried = l.candidates.length
    ? `; chose ${l.chosen} of ${l.candidates.length} splits tried (${l.residualEncodes} residual encodes)`
    : '';
  return [
    `  layers: base ${l.baseBytes} B, residual ${l.residualBytes} B${l.residualBytes ? ` (step ${steps})` : ''}${tried}`,
  ];
}

export const command: Command = {
  name: 'compress',
  summary: 'write a .rkf file that meets a storage budget or quality floor',
  help,
  async helpFor(argv) {
    return argv.includes('--stack') ? (await import('./compress-stack')).stackHelp : help;
  },
  async run(argv, io, early) {
    if (argv.includes('--stack')) {
      const mod = (await import('./compress-stack')) as {
        runStack(argv: string[], io: CliIO): Promise<number>;
      };
      return mod.runStack(argv, io);
    }
    const { values: v, positionals } = parseCommandArgs('compress', argv, COMPRESS_OPTIONS);
    const input = positionals[0];
    if (!input) throw new UsageError('compress: missing input file. See `rankfold compress --help`.');
    const output = v.output as string | undefined;
    if (!output) throw new UsageError('compress: missing -o OUT.rkf. See `rankfold compress --help`.');
    const [budget] = parseBudgetOrLossless(v, {
      prefix: 'compress: ',
      missing:
        'compress: give one budget: --rank K, --budget SIZE, --bpp X, --min-psnr DB or --min-ssim S. See `rankfold compress --help`.',
    });
    const workers =
      v.workers !== undefined
        ? parseOptionText(OPTIONS.workers, v.workers as string)
        : OPTIONS.workers.default;
    const report = await compressFile(
      input,
      output,
      {
        budget,
        tile: parseTileOption(v.tile as string | undefined),
        page: v.page !== undefined ? parseOptionText(OPTIONS.page, v.page as string) : undefined,
        pixelLimit:
          v['pixel-limit'] !== undefined
            ? parseOptionText(OPTIONS.pixelLimit, v['pixel-limit'] as string)
            : undefined,
        force: Boolean(v.force),
        compare: Boolean(v.compare),
        layers: parseLayersOption(v.layers as string | undefined),
        ...(v.lossless ? { lossless: true } : {}),
      },
      {
        workers,
        // The side thread the CLI entry started before loading this command (it closes it afterwards).
        side: (workers ?? 1) >= 2 ? early?.side : undefined,
        arenaAhead: early?.arena,
        onProgress:
          io.isTTY && !v.json
            ? (p) => io.stderr(`\r${p.stage.padEnd(10)} ${Math.round(p.fraction * 100)}%`)
            : undefined,
      },
    );
    if (io.isTTY && !v.json) io.stderr('\r                \r');
    for (const w of report.warnings ?? []) io.stderr(`warning: ${w}\n`);
    if (v.json) {
      io.stdout(`${JSON.stringify({ ...report, caution: report.lossless ? undefined : LOSSY_CAUTION })}\n`);
      if (!report.lossless) io.stderr(`${LOSSY_CAUTION}\n`);
    } else io.stdout(formatReport(report) + (report.lossless ? '' : `${LOSSY_CAUTION}\n`));
    return 0;
  },
};

function parseLayersOption(text: string | undefined): 'auto' | 'base' | undefined {
  return text === undefined ? undefined : parseOptionText(OPTIONS.layers, text);
}
