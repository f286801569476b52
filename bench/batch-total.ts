/**
 * `batch --total` against one ratio for all (issue #13), for bench/batch.bench.ts: a mixed folder of 13 scans
 * (our own test images and samples, named below; long side at most 512 pixels so the run stays short), first
 * with `--budget 4%` (one ratio for every file), then with `--total` at exactly the bytes that run wrote.
 * Targets: the worst file's PSNR rises by ≥ 3 dB, the sum stays ≤ the total, and the survey adds ≤ 30 % to
 * the batch's time. Returns the Markdown section.
 */
import { mkdir, readdir } from 'node:fs/promises';
import { loadavg } from 'node:os';
import { join } from 'node:path';
import sharp from 'sharp';
import type { BatchRow } from '../src-main/contract';
import { runBatch } from '../src-main/node/batch/run';
import type { SpareInfo } from '../src-main/node/batch/spare';
import { batchWorkerFile } from '../src-main/node/batch/worker-path';
import { unseenFolder } from './batch-unseen';

const SHARE = 4;
/** Sources: test/fixtures/images (test/fixtures/SOURCES.md) and samples/ (samples/SOURCES.md). */
const SOURCES = [
  'test/fixtures/images/camera.png',
  'test/fixtures/images/moon.png',
  'test/fixtures/images/page.png',
  'test/fixtures/images/text.png',
  'test/fixtures/images/phantom.png',
  'samples/colour-slide.png',
  'samples/film-plate-16bit.tif',
  'samples/gel-scan.tif',
  'samples/ledger-page.png',
  'samples/map-sheet.png',
  'samples/line-sensor-banding.png',
];

/** The folder: each source with its long side at most 512, plus two near-blank leaves cut from the ledger's margin. */
async function mixedFolder(dir: string): Promise<string[]> {
  await mkdir(dir, { recursive: true });
  for (const src of SOURCES) {
    const name = src
      .split('/')
      .pop()!
      .replace(/\.tif$/, '.png');
    await sharp(src)
      .resize(512, 512, { fit: 'inside', withoutEnlargement: true })
      .png()
      .toFile(join(dir, name));
  }
  for (const [i, left] of [0, 1100].entries())
    await sharp('samples/ledger-page.png')
      .extract({ left, top: 0, width: 480, height: 160 })
      .png()
      .toFile(join(dir, `margin-leaf-${i + 1}.png`));
  return readdir(dir);
}

const worst = (rows: BatchRow[]) =>
  Math.min(...rows.filter((r) => r.status === 'ok').map((r) => r.psnr ?? Infinity));
const bytes = (rows: BatchRow[]) => rows.reduce((s, r) => s + (r.status === 'ok' ? (r.bytes ?? 0) : 0), 0);

/** One folder: one ratio for all, then `--total` at the bytes that run wrote. Returns the section's lines. */
async function compareOn(root: string, inDir: string, what: string): Promise<string[]> {
  const load0 = loadavg()[0];
  const common = { inDir, jobs: 2, workerFile: batchWorkerFile(), timeoutMs: 0 };
  const tile = 'auto' as const;
  const one = await runBatch({
    ...common,
    outDir: join(root, 'one-ratio'),
    compress: { budget: { kind: 'percent', percent: SHARE }, tile },
  });
  const size = bytes(one.rows);
  // User CPU of this process (the workers are its threads): the survey's share is also given by CPU time,
  // which a loaded machine disturbs less than wall time. The survey ends with its note.
  const cpu0 = process.cpuUsage().user;
  let surveyCpu = Number.NaN;
  const t0 = performance.now();
  const fit = await runBatch({
    ...common,
    outDir: join(root, 'total'),
    compress: { budget: { kind: 'percent', percent: 100 }, tile },
    total: { kind: 'bytes', bytes: size },
    onNote: (t) => {
      if (t.startsWith('survey:')) surveyCpu = (process.cpuUsage().user - cpu0) / 1e6;
      console.error(`bench batch: ${t}`);
    },
  });
  const fitCpu = (process.cpuUsage().user - cpu0) / 1e6;
  const fitSeconds = (performance.now() - t0) / 1000;
  const surveyMs = fit.collection?.surveyMs ?? 0;
  const failed = [...one.rows, ...fit.rows].filter((r) => r.status === 'failed');
  if (failed.length) throw new Error(`bench batch --total: ${failed[0].path}: ${failed[0].error?.message}`);
  const rise = worst(fit.rows) - worst(one.rows);
  const sum = bytes(fit.rows);
  const encodeSeconds = fitSeconds - surveyMs / 1000;
  const share = surveyMs / 1000 / encodeSeconds;
  const load1 = loadavg()[0];
  const psnrOf = (rows: BatchRow[], p: string) => {
    const v = rows.find((r) => r.path === p)?.psnr;
    return v === undefined ? '—' : Number.isFinite(v) ? v.toFixed(2) : 'exact';
  };
  return [
    `${what} 2 jobs, tile auto. One ratio for all: \`--budget ${SHARE}%\`, which wrote ${size} bytes; then \`--total ${size}\`.`,
    `1-minute load average ${load0.toFixed(2)} before, ${load1.toFixed(2)} after, on a shared 2-core machine: timings are noisy.`,
    '',
    '| file | one ratio (PSNR dB) | --total (PSNR dB) | --total bytes (cap) |',
    '|---|---|---|---|',
    ...fit.rows
      .filter((r) => r.status === 'ok')
      .map(
        (r) =>
          `| ${r.path} | ${psnrOf(one.rows, r.path)} | ${psnrOf(fit.rows, r.path)} | ${r.bytes} (${r.plan?.bytes}) |`,
      ),
    '',
    `Worst file: ${worst(one.rows).toFixed(2)} dB with one ratio, ${worst(fit.rows).toFixed(2)} dB with --total: ${rise >= 0 ? '+' : ''}${rise.toFixed(2)} dB (target ≥ +3 dB: ${rise >= 3 ? 'met' : 'NOT met'}). Predicted floor ${fit.collection?.floor.toFixed(2)} dB.`,
    `Sum: ${sum} bytes of the total ${size} (target ≤ total: ${sum <= size ? 'met' : 'NOT met'}).`,
    spareText(fit.collection?.spare),
    `Survey by user CPU time (all threads): ${surveyCpu.toFixed(1)} s of ${fitCpu.toFixed(1)} s for the whole --total run, so it adds ${((100 * surveyCpu) / (fitCpu - surveyCpu)).toFixed(0)} % to the rest.`,
    `Survey: ${(surveyMs / 1000).toFixed(1)} s; the rest of the --total run ${encodeSeconds.toFixed(1)} s; the one-ratio run ${(one.summary.elapsedMs / 1000).toFixed(1)} s. The survey adds ${(100 * share).toFixed(0)} % to the batch (target ≤ 30 %: ${share <= 0.3 ? 'met' : 'NOT met'}).`,
    '',
  ];
}

export async function totalSection(root: string): Promise<string[]> {
  const inDir = join(root, 'mixed');
  const names = await mixedFolder(inDir);
  const first = await compareOn(
    join(root, 'first'),
    inDir,
    `Folder: ${names.length} mixed scans (${SOURCES.join(', ')}, each with its long side at most 512 pixels, and two near-blank leaves cut from the top margin of samples/ledger-page.png),`,
  );
  const unseenDir = join(root, 'unseen');
  const unseen = await unseenFolder(unseenDir);
  const second = await compareOn(
    join(root, 'second'),
    unseenDir,
    `Folder: ${unseen.length} scans that the folder above does not hold (bench/batch-unseen.ts: full-resolution details, turned, mirrored, enlarged and grained copies of the same sources, page 1 of the gel scan, the 16-bit chessboard, a grained blank leaf and a collage): ${unseen.join(', ')};`,
  );
  return [
    '## A folder into a total (`npm run bench batch`, issue #13)',
    '',
    ...first,
    '### A second folder, not used while the allocator was tuned',
    '',
    ...second,
  ];
}

/** What the spare step did (src-main/node/batch/spare.ts), as one line of the section. */
function spareText(s: SpareInfo | undefined): string {
  if (!s) return 'Spare bytes: none recorded.';
  const files = s.replaced.map((r) => `${r.path} ${r.from.toFixed(2)} → ${r.to.toFixed(2)} dB`).join(', ');
  return `Spare bytes: ${s.before} bytes were left under the total after the encode; ${s.tried} of the worst files tried, ${s.replaced.length} replaced${files ? ` (${files})` : ''}; ${s.after} bytes left.`;
}
