/**
 * The denoise step as jobs over the workers: rows of the full-size level and, for correlated noise, the coarse
 * levels of pyramid.ts. Each job is one denoiseBand call (band-independent rows), so however the jobs are cut
 * and shared the level estimates, and the recomposed result, are bit-identical. Pure: no Node, no I/O.
 */
import type { GroupParams } from './group-low-rank';
import { type BandResult, denoiseBand } from './patch-groups';
import type { PreparedClean } from './pipeline';
import { type DenoiseLevel, recomposeLevels } from './pyramid';

/** Rows [rowStart, rowEnd) of level `level` (0 = the full size, l ≥ 1 = coarse level l). */
export interface LevelJob {
  level: number;
  rowStart: number;
  rowEnd: number;
}

/**
 * The jobs of each of `workers` workers, so that each gets a near-equal share of the pixels of all levels
 * (the cost per pixel is about the same at every level: same patch, group and search sizes). Coarse levels go
 * whole, largest first, to the least loaded worker (splitting a small level costs more than it balances: each
 * band also processes the groups that reach it from up to 2·radius + patch rows away); the full-size rows are
 * then shared out in proportion to what each worker still lacks. A worker may get no job when there are more
 * workers than work; the list has one entry per worker.
 */
export function levelJobs(sizes: Array<{ width: number; height: number }>, workers: number): LevelJob[][] {
  const n = Math.max(1, workers);
  const jobs: LevelJob[][] = Array.from({ length: n }, () => []);
  const area = sizes.map((s) => s.width * s.height);
  const load = new Array<number>(n).fill(0);
  const coarse = sizes.map((_, l) => l).filter((l) => l > 0);
  coarse.sort((a, b) => area[b] - area[a] || a - b);
  for (const l of coarse) {
    let w = 0;
    for (let i = 1; i < n; i++) if (load[i] < load[w]) w = i;
    jobs[w].push({ level: l, rowStart: 0, rowEnd: sizes[l].height });
    load[w] += area[l];
  }
  const target = area.reduce((a, b) => a + b, 0) / n;
  const lack = load.map((v) => Math.max(0, target - v));
  const total = lack.reduce((a, b) => a + b, 0);
  const H = sizes[0].height;
  let acc = 0;
  let start = 0;
  for (let w = 0; w < n; w++) {
    acc += lack[w];
    const end = w === n - 1 ? H : Math.round((H * acc) / total);
    if (end > start) jobs[w].unshift({ level: 0, rowStart: start, rowEnd: end });
    start = Math.max(start, end);
  }
  return jobs;
}

/** Run the jobs of one worker; `out[level][plane]` receives the rows (whole-level planes). */
export function runLevelJobs(
  levels: DenoiseLevel[],
  jobs: LevelJob[],
  out: Float32Array[][],
  onProgress?: (fraction: number) => void,
): BandResult['stats'][] {
  const size = (j: LevelJob) => (j.rowEnd - j.rowStart) * levels[j.level].width;
  const total = jobs.reduce((a, j) => a + size(j), 0) || 1;
  let done = 0;
  const stats: BandResult['stats'][] = [];
  for (const j of jobs) {
    const L = levels[j.level];
    const res = denoiseBand({ ...L, rowStart: j.rowStart, rowEnd: j.rowEnd }, (f) =>
      onProgress?.((done + f * size(j)) / total),
    );
    for (let c = 0; c < res.planes.length; c++) out[j.level][c].set(res.planes[c], j.rowStart * L.width);
    if (j.level === 0) stats.push(res.stats);
    done += size(j);
  }
  return stats;
}

/** The levels to denoise: 0 the full size (the active planes), then the coarse levels of correlated noise. */
export function denoiseLevels(prep: PreparedClean): DenoiseLevel[] {
  const planes = prep.active.map((c) => prep.work[c]);
  const sigmas = prep.active.map((c) => prep.sigmas[c]);
  const full = { planes, width: prep.width, height: prep.height, sigmas, params: prep.params as GroupParams };
  return [full, ...(prep.coarse ?? [])];
}

/** All work planes from the level estimates (`out[level][plane]`): recomposed, with the passed-through others. */
export function joinLevels(prep: PreparedClean, out: Float32Array[][]): Float32Array[] {
  const levels = prep.coarse ?? [];
  return withPassThrough(prep, recomposeLevels(out[0], prep.width, prep.height, levels, out.slice(1)));
}

/** All work planes: the denoised ones (in `prep.active` order) and the passed-through others. */
export function withPassThrough(prep: PreparedClean, denoised: Float32Array[]): Float32Array[] {
  return prep.work.map((p, c) => {
    const k = prep.active.indexOf(c);
    return k >= 0 ? denoised[k] : p;
  });
}
