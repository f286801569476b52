/**
 * Stack mode against AV1 on a 24-frame correlated series (issue 12's stack target): at 0.25 bpp, the mean PSNR
 * of `rankfold compress --stack` against ffmpeg's libaom-av1 (cpu-used 4, monochrome, the smallest CRF whose
 * stream fits the same bytes, found by bisection over 0–63), and the wall time of each whole process
 * (median of RUNS). ffmpeg is installed with apt-get when missing (bench only, never npm test).
 * Used by bench/stack.bench.ts, which writes the section.
 */
import { spawnSync } from 'node:child_process';
import { mkdirSync, mkdtempSync, readFileSync, rmSync, statSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { performance } from 'node:perf_hooks';
import sharp from 'sharp';
import { driftingSpecimen } from './models/synthetic';
import { median } from './timing';

const SIDE = 512;
const FRAMES = 24;
const BPP = 0.25;
const RUNS = 3;

interface Run {
  bytes: number;
  mean: number;
  worst: number;
  seconds: number;
  note: string;
}

const has = (cmd: string) => spawnSync('sh', ['-c', `command -v ${cmd}`]).status === 0;

/** ffmpeg from Debian when missing (bench only). Returns a reason when it is still missing. */
function ensureFfmpeg(): string | undefined {
  if (has('ffmpeg')) return undefined;
  console.error('ffmpeg missing: apt-get install ffmpeg');
  const env = { ...process.env, DEBIAN_FRONTEND: 'noninteractive' };
  spawnSync('apt-get', ['update', '-qq'], { env, stdio: 'inherit' });
  const r = spawnSync('apt-get', ['install', '-y', '-qq', 'ffmpeg'], { env, stdio: 'inherit' });
  return has('ffmpeg') ? undefined : `ffmpeg could not be installed (apt-get exit ${r.status})`;
}

function psnrs(src: Uint8Array, dec: Uint8Array): number[] {
  const n = SIDE * SIDE;
  return Array.from({ length: FRAMES }, (_, j) => {
    let s = 0;
    for (let p = j * n; p < (j + 1) * n; p++) s += (src[p] - dec[p]) ** 2;
    return s === 0 ? 99 : 10 * Math.log10((255 * 255 * n) / s);
  });
}

/** Wall seconds of a whole child process (median of RUNS), and its last result. */
function timed(cmd: string, args: string[]): { seconds: number; stdout: string } {
  const ts: number[] = [];
  let stdout = '';
  for (let i = 0; i < RUNS; i++) {
    const t = performance.now();
    const r = spawnSync(cmd, args, { encoding: 'utf8', maxBuffer: 1 << 26 });
    ts.push((performance.now() - t) / 1000);
    if (r.status !== 0) throw new Error(`${cmd} failed: ${r.stderr.slice(-400)}`);
    stdout = r.stdout;
  }
  return { seconds: median(ts), stdout };
}

function av1Args(raw: string, out: string, crf: number): string[] {
  return [
    ...['-hide_banner', '-loglevel', 'error', '-y', '-f', 'rawvideo', '-pix_fmt', 'gray'],
    ...['-s', `${SIDE}x${SIDE}`, '-r', '24', '-i', raw, '-c:v', 'libaom-av1', '-cpu-used', '4'],
    ...['-crf', String(crf), '-b:v', '0', '-pix_fmt', 'gray', '-f', 'obu', out],
  ];
}

function av1(dir: string, raw: string, src: Uint8Array, budget: number): Run {
  const out = join(dir, 'series.obu');
  const size = (crf: number) => {
    const r = spawnSync('ffmpeg', av1Args(raw, out, crf), { encoding: 'utf8' });
    if (r.status !== 0) throw new Error(`ffmpeg libaom-av1 failed: ${r.stderr.slice(-400)}`);
    return statSync(out).size;
  };
  // Smallest CRF (best quality) whose stream fits: size falls as CRF rises.
  let lo = 0;
  let hi = 63;
  let best = -1;
  while (lo <= hi) {
    const mid = (lo + hi) >> 1;
    if (size(mid) <= budget) {
      best = mid;
      hi = mid - 1;
    } else lo = mid + 1;
  }
  if (best < 0)
    return {
      bytes: Number.NaN,
      mean: Number.NaN,
      worst: Number.NaN,
      seconds: 0,
      note: 'CRF 63 is over budget',
    };
  const { seconds } = timed('ffmpeg', av1Args(raw, out, best));
  const decoded = join(dir, 'decoded.gray');
  spawnSync('ffmpeg', [
    '-hide_banner',
    '-loglevel',
    'error',
    '-y',
    '-i',
    out,
    '-f',
    'rawvideo',
    '-pix_fmt',
    'gray',
    decoded,
  ]);
  const ps = psnrs(src, new Uint8Array(readFileSync(decoded)));
  return {
    bytes: statSync(out).size,
    mean: ps.reduce((a, b) => a + b, 0) / FRAMES,
    worst: Math.min(...ps),
    seconds,
    note: `CRF ${best}`,
  };
}

function rankfold(dir: string, frames: string, budget: number): Run {
  const out = join(dir, 'series.rkf');
  const { seconds, stdout } = timed(process.execPath, [
    join('dist', 'cli.js'),
    ...['compress', '--stack', frames, '--bpp', String(BPP), '-o', out, '--json', '--force'],
  ]);
  const r = JSON.parse(stdout);
  if (r.outputBytes > budget) throw new Error(`rankfold wrote ${r.outputBytes} bytes over ${budget}`);
  const k = r.spectrum[0].stored;
  const res = r.perFrame.filter((f: { residual: boolean }) => f.residual).length;
  return {
    bytes: r.outputBytes,
    mean: r.psnr.mean,
    worst: r.psnr.worst,
    seconds,
    note: `k=${k}, ${res} residuals`,
  };
}

/** The section's lines, or a note saying why AV1 could not be run. */
export async function av1Section(): Promise<string[]> {
  const head = [`### Against AV1: Fenwick Lab time-lapse, ${FRAMES} × ${SIDE}×${SIDE}, ${BPP} bpp`, ''];
  const missing = ensureFfmpeg();
  if (missing) return [...head, `AV1 not run: ${missing}.`, ''];
  const s = driftingSpecimen({
    width: SIDE,
    height: SIDE,
    frames: FRAMES,
    seed: 1,
    noise: 1.5,
    texture: 40,
    drift: 0.5,
  });
  const dir = mkdtempSync(join(tmpdir(), 'rankfold-av1-'));
  try {
    const frames = join(dir, 'frames');
    mkdirSync(frames);
    const src = new Uint8Array(SIDE * SIDE * FRAMES);
    await Promise.all(
      s.frames.map((f, j) => {
        const px = Uint8Array.from(f);
        src.set(px, j * SIDE * SIDE);
        return sharp(px, { raw: { width: SIDE, height: SIDE, channels: 1 } })
          .toColourspace('b-w')
          .png()
          .toFile(join(frames, `frame-${String(j + 1).padStart(3, '0')}.png`));
      }),
    );
    const raw = join(dir, 'series.gray');
    writeFileSync(raw, src);
    const budget = Math.floor((BPP * SIDE * SIDE * FRAMES) / 8);
    const rf = rankfold(dir, frames, budget);
    const a = av1(dir, raw, src, budget);
    const load = readFileSync('/proc/loadavg', 'utf8').split(' ').slice(0, 3).join(' ');
    const dB = rf.mean - a.mean;
    const ratio = rf.seconds / a.seconds;
    console.error(
      `stack bench: AV1 ${a.mean.toFixed(2)} dB in ${a.seconds.toFixed(2)} s, stack ${rf.mean.toFixed(2)} dB in ${rf.seconds.toFixed(2)} s`,
    );
    return [
      ...head,
      `Budget ${budget} bytes for the series. Wall time of the whole process, median of ${RUNS} (Rankfold: \`node dist/cli.js compress --stack\` from the PNG frames, reading and the report's PSNR/SSIM included; AV1: \`ffmpeg\` from raw grey samples, CRF chosen beforehand by bisection). Load average at the end of the run: ${load} (2 cores).`,
      '',
      '| method | bytes | PSNR mean | PSNR worst | setting | wall s |',
      '|---|---|---|---|---|---|',
      ...[
        ['Rankfold stack', rf],
        ['AV1 (libaom, cpu-used 4)', a],
      ].map(([name, r]) => {
        const x = r as Run;
        return `| ${name} | ${x.bytes} | ${x.mean.toFixed(2)} | ${x.worst.toFixed(2)} | ${x.note} | ${x.seconds.toFixed(2)} |`;
      }),
      '',
      `Target: mean PSNR ≥ AV1 + 1 dB at ≤ the same bytes — measured ${dB >= 0 ? '+' : ''}${dB.toFixed(2)} dB (${dB >= 1 ? 'met' : 'not met'}); wall time ≤ 1.5 × AV1 — measured ${ratio.toFixed(2)} × (${ratio <= 1.5 ? 'met' : 'not met'}).`,
      '',
    ];
  } finally {
    rmSync(dir, { recursive: true, force: true });
  }
}
