/** `rankfold inspect FILE`: size, depth, channels and the singular-value spectrum of a scan. */
import cliProgress from 'cli-progress';
import {
  type InspectReport,
  OPTIONS,
  type PlaneSpectrum,
  parseOptionText,
  UsageError,
} from '../../../contract';
import { DEFAULT_PIXEL_LIMIT } from '../../image/decode';
import { inspectScan } from '../../services/inspect';
import { type CliIO, type Command, flags, parseCommandArgs } from '../args/command';

const options = flags('page pixel-limit', 'json full');

const help = `Usage: rankfold inspect FILE [--page N] [--json] [--full] [--pixel-limit N]

Show what a scan is made of: size, channels, bit depth and the singular values of its gray plane
(or of its luma, Y = 0.299 R + 0.587 G + 0.114 B, for colour scans), the ranks that hold 90 %, 99 %
and 99.9 % of the energy (Σσ²), and the error of the best rank-k approximation for a few k
(Eckart–Young: spectral error σ(k+1), Frobenius error sqrt(Σ σi² for i > k), and its PSNR).
Colour scans also get a line per channel (red, green, blue). Alpha is not analysed.

Reads PNG, TIFF, JPEG and WebP, 8 or 16 bits, gray or colour. Values are in grey levels of the
input (0–255 for 8-bit, 0–65535 for 16-bit). Scans up to 2048 pixels on the short side get every
singular value; larger ones get the top 512 (randomized SVD). Scans above 2^25 pixels (33.5 MP) are
read in strips and their top 64 values estimated from a randomized sketch (Halko, Martinsson & Tropp
2011, Alg. 4.4 + 5.1; the output says so); the energy and the 90/99/99.9 % ranks use the exact energy.

Options:
  --page N          TIFF page to read, counting from 0 (default 0)
  --json            print one JSON object (width, height, channels, bitDepth, singularValues, …)
  --full            list every singular value in the text output
  --pixel-limit N   refuse images with more pixels than N (default ${DEFAULT_PIXEL_LIMIT})

Nothing is written; the file is only read.
`;

const num = (v: number, digits = 6) => {
  if (!Number.isFinite(v)) return v > 0 ? '∞' : String(v);
  if (v === 0) return '0';
  const a = Math.abs(v);
  return a >= 1e6 || a < 1e-3 ? v.toExponential(digits - 1) : Number(v.toPrecision(digits)).toString();
};
const bytes = (n: number) =>
  n >= 1e9
    ? `${(n / 1e9).toFixed(2)} GB`
    : n >= 1e6
      ? `${(n / 1e6).toFixed(2)} MB`
      : n >= 1e3
        ? `${(n / 1e3).toFixed(1)} kB`
        : `${n} B`;
const pct = (f: number) => `${Number((f * 100).toPrecision(4))} %`;
const CHANNEL_NAMES = ['gray', 'gray + alpha', 'RGB', 'RGB + alpha'];

/** Indices (1-based) of σ shown in the short listing: 1–10, then roughly logarithmic steps, then the last. */
function shownIndices(count: number): number[] {
  const out: number[] = [];
  for (let i = 1; i <= Math.min(10, count); i++) out.push(i);
  for (const i of [20, 50, 100, 200, 500, 1000, 2000]) if (i < count) out.push(i);
  if (count > 10) out.push(count);
  return out;
}

function spectrumLines(sp: PlaneSpectrum, full: boolean): string[] {
  const s = sp.singularValues;
  const lines: string[] = [];
  const idx = full ? s.map((_, i) => i + 1) : shownIndices(s.length);
  const cells = idx.map((i) => `σ${i} ${num(s[i - 1])}`);
  const width = Math.max(...cells.map((c) => c.length)) + 2;
  const perLine = Math.max(1, Math.floor(96 / width));
  for (let i = 0; i < cells.length; i += perLine)
    lines.push(
      `  ${cells
        .slice(i, i + perLine)
        .map((c) => c.padEnd(width))
        .join('')
        .trimEnd()}`,
    );
  return lines;
}

function energyText(sp: PlaneSpectrum): string {
  return sp.energyRanks
    .map((e) => `${pct(e.fraction)} by rank ${e.rank ?? `> ${sp.singularValues.length}`}`)
    .join(', ');
}

/** The human-readable report. */
export function formatInspectReport(r: InspectReport, full = false): string {
  const main = r.spectra[0];
  const mp = (r.width * r.height) / 1e6;
  const out: string[] = [];
  out.push(`File         ${r.file}`);
  out.push(
    `Format       ${r.format.toUpperCase()}${r.pages > 1 ? `, page ${r.page} of pages 0–${r.pages - 1}` : ''}`,
  );
  out.push(
    `Image        ${r.width} × ${r.height} pixels (${mp.toFixed(2)} MP), ${r.channels} channel${r.channels > 1 ? 's' : ''} (${CHANNEL_NAMES[r.channels - 1]}), ${r.bitDepth}-bit`,
  );
  out.push(`Size         ${bytes(r.inputBytes)} on disk, ${bytes(r.rawBytes)} of raw samples`);
  if (r.density) out.push(`Resolution   ${Number(r.density.toFixed(2))} dpi`);
  if (r.orientation && r.orientation !== 1)
    out.push(`Orientation  EXIF ${r.orientation} (applied: figures are for the upright image)`);
  if (r.hasIccProfile) out.push('ICC profile  embedded (kept; samples are analysed as stored)');
  out.push('');
  const planeName = r.plane === 'luma' ? 'luma (BT.601: 0.299 R + 0.587 G + 0.114 B)' : 'gray plane';
  const how = main.sketch
    ? `top ${main.singularValues.length} of ${Math.min(r.width, r.height)} values estimated from a randomized sketch (Halko, Martinsson & Tropp 2011, Alg. 4.4 + 5.1: ${main.sketch.columns} columns, ${main.sketch.powerIterations} power iteration, ${main.sketch.passes} passes over the samples); energy exact`
    : main.method === 'randomized'
      ? `top ${main.singularValues.length} of ${Math.min(r.width, r.height)} values, randomized SVD`
      : `all ${main.singularValues.length} values, ${main.method === 'jacobi' ? 'one-sided Jacobi' : 'Gram-matrix eigenvalues'}`;
  out.push(`Singular values of the ${planeName}, in grey levels (0–${r.maxValue}); ${how}:`);
  out.push(...spectrumLines(main, full));
  if (!full && main.singularValues.length > 10)
    out.push('  (--full lists every value; --json gives them all as numbers)');
  out.push('');
  out.push(`Energy Σσ² captured: ${energyText(main)}`);
  out.push('');
  out.push('Best rank-k approximation (Eckart–Young), in grey levels:');
  const head = ['k', 'spectral σ(k+1)', 'Frobenius', 'RMS per pixel', 'PSNR dB'];
  const rows = main.errors.map((e) => [
    String(e.k),
    num(e.spectral),
    num(e.frobenius),
    num(e.rms, 4),
    e.psnrDb === null ? '∞ (exact)' : e.psnrDb.toFixed(2),
  ]);
  const widths = head.map((h, c) => Math.max(h.length, ...rows.map((row) => row[c].length)));
  const fmt = (cells: string[]) => `  ${cells.map((c, i) => c.padStart(widths[i])).join('   ')}`;
  if (rows.length) {
    out.push(fmt(head));
    for (const row of rows) out.push(fmt(row));
  } else out.push(`  (the plane has rank ≤ ${main.singularValues.length}: no smaller rank to compare)`);
  if (r.spectra.length > 1) {
    out.push('');
    out.push('Per channel:');
    const chHead = ['plane', 'σ1', '90 %', '99 %', '99.9 %', 'PSNR at k=50', 'values'];
    const chRows = r.spectra.map((sp) => {
      const at50 = sp.errors.find((e) => e.k === 50);
      return [
        sp.plane,
        num(sp.singularValues[0] ?? 0),
        ...sp.energyRanks.map((e) => (e.rank === null ? `> ${sp.singularValues.length}` : String(e.rank))),
        at50 ? (at50.psnrDb === null ? '∞' : `${at50.psnrDb.toFixed(2)} dB`) : '–',
        sp.complete ? 'all' : `top ${sp.singularValues.length}`,
      ];
    });
    const w2 = chHead.map((h, c) => Math.max(h.length, ...chRows.map((row) => row[c].length)));
    const f2 = (cells: string[]) =>
      `  ${cells.map((c, i) => (i === 0 ? c.padEnd(w2[i]) : c.padStart(w2[i]))).join('   ')}`;
    out.push(f2(chHead));
    for (const row of chRows) out.push(f2(row));
    out.push('  (90 %, 99 %, 99.9 %: the rank that captures that share of the channel’s energy)');
  }
  out.push('');
  out.push(
    `Took ${((r.timings.decodeMs + r.timings.spectrumMs) / 1000).toFixed(2)} s (decode ${(r.timings.decodeMs / 1000).toFixed(2)} s).`,
  );
  return `${out.join('\n')}\n`;
}

/** A progress bar on stderr (cli-progress, as batch draws its own): stage, bar, percent. */
function progressBar(): { update: (stage: string, done: number, total: number) => void; stop: () => void } {
  const bar = new cliProgress.SingleBar(
    {
      stream: process.stderr,
      format: 'inspect {stage} {bar} {percentage}%',
      barsize: 28,
      hideCursor: true,
      clearOnComplete: true,
      fps: 5,
    },
    cliProgress.Presets.shades_classic,
  );
  let started = false;
  return {
    update(stage, done, total) {
      if (!started) {
        bar.start(total, done, { stage: stage.padEnd(8) });
        started = true;
      }
      bar.setTotal(total);
      bar.update(done, { stage: stage.padEnd(8) });
    },
    stop() {
      if (started) bar.stop();
    },
  };
}

export const command: Command = {
  name: 'inspect',
  summary: 'show size, depth and the singular-value spectrum of a scan',
  help,
  async run(argv: string[], io: CliIO): Promise<number> {
    const { values, positionals } = parseCommandArgs('inspect', argv, options, 1);
    const file = positionals[0];
    if (!file) throw new UsageError('inspect: no input file given. Usage: rankfold inspect FILE [--json]');
    const page = values.page === undefined ? undefined : parseOptionText(OPTIONS.page, values.page as string);
    const pixelLimit =
      values['pixel-limit'] === undefined
        ? undefined
        : parseOptionText(OPTIONS.pixelLimit, values['pixel-limit'] as string);
    const bar = io.isTTY && !values.json ? progressBar() : undefined;
    let report: InspectReport;
    try {
      report = await inspectScan({ file, page, pixelLimit }, { onProgress: bar?.update });
    } finally {
      bar?.stop();
    }
    for (const w of report.warnings ?? []) io.stderr(`warning: ${w}\n`);
    io.stdout(
      values.json ? `${JSON.stringify(report)}\n` : formatInspectReport(report, Boolean(values.full)),
    );
    return 0;
  },
};
