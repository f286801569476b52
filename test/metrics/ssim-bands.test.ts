// The report's SSIM summed on a second thread while the file is decoded band by band
// (src-main/engine/lowrank/ssim-bands.ts): decoded rows go into a small ring of shared slots, each slot a job of
// SSIM row sums. Whichever thread sums which slot, whenever the jobs are joined, and whatever the band heights
// (down to one row, below the 11-row window), the value must be ssim() of the whole planes
// (src-main/engine/metrics/ssim.ts, Wang et al. 2004) bit for bit. A job computed only when joined reads its slot
// then, so a slot written again before its job was joined would change the value.
import { beforeAll, describe, expect, it } from 'vitest';
import { initEngine } from '../../src-main/engine/linalg';
import { runHere, type SideRunner } from '../../src-main/engine/lowrank/side-jobs';
import { readySlots, SsimBands, touchPages } from '../../src-main/engine/lowrank/ssim-bands';
import { ssim } from '../../src-main/engine/metrics';
import { lcg } from '../helpers/lcg';

beforeAll(async () => {
  await initEngine();
});

/** A grey ramp with edges, and the same with seeded noise, rounded and clamped as decoded samples are. */
function pair(w: number, h: number, seed: number): [Float32Array, Float32Array] {
  const next = lcg(seed);
  const a = Float32Array.from({ length: w * h }, (_, i) => ((i % w) * 7 + Math.floor(i / w) * 3) % 256);
  const b = a.map((v) => Math.min(255, Math.max(0, Math.round(v + (next() - 0.5) * 40))));
  return [a, b];
}

/**
 * A runner whose "other thread" sums at once the jobs for which `early` holds (it started them) and leaves the
 * others to the join (taken back by the calling thread), which then reads the slot as it is at that moment.
 */
function splitRunner(early: (i: number) => boolean, log: { jobs: number; rows: number[] }): SideRunner {
  return (name, args) => {
    const i = log.jobs++;
    const a = args as { from: number; to: number };
    log.rows.push(a.from, a.to);
    const done = early(i) ? runHere(name, args)() : undefined;
    return () => done ?? runHere(name, args)();
  };
}

/** Feed the decoded plane `b` in bands of the given heights (repeated), as the band decoder hands them over. */
function measure(run: SideRunner, a: Float32Array, b: Float32Array, w: number, h: number, bands: number[]) {
  const s = new SsimBands(run, a, w, h, 255);
  for (let y = 0, k = 0; y < h; k++) {
    const rows = Math.min(bands[k % bands.length], h - y);
    s.add(b.slice(y * w, (y + rows) * w), rows);
    y += rows;
  }
  return s.value();
}

/** Job states by letter (./side-jobs SideJobState). */
const STATES = { a: 'answered', o: 'offered', r: 'running' } as const;

const SIZES: Array<[number, number]> = [
  [11, 11],
  [13, 12],
  [40, 73],
  [40, 74],
  [23, 75],
  [37, 139],
  [64, 330],
];

const RUNNERS: Array<[string, (i: number) => boolean]> = [
  ['every job on the other thread', () => true],
  ['every job taken back when joined', () => false],
  ['the first two on the other thread', (i) => i < 2],
  ['every other job', (i) => i % 2 === 1],
];

describe('SSIM summed in a ring of slots equals ssim() of the whole planes bit for bit', () => {
  it.each(SIZES)('%i×%i, band heights 16, 1, 7, 74, 200 and mixed', (w, h) => {
    const [a, b] = pair(w, h, w * 31 + h);
    const want = ssim(a, b, w, h, 255);
    expect(want).toBeLessThan(1);
    expect(want).toBeGreaterThan(0);
    for (const bands of [[16], [1], [7], [74], [200], [3, 16, 1, 64, 9]])
      for (const [, early] of RUNNERS) {
        const log = { jobs: 0, rows: [] as number[] };
        expect(measure(splitRunner(early, log), a, b, w, h, bands)).toBe(want);
        // The jobs cover the window rows 0 … h − 10 in order, each once.
        const rows = log.rows;
        expect(rows[0]).toBe(0);
        expect(rows[rows.length - 1]).toBe(h - 10);
        for (let j = 2; j < rows.length; j += 2) expect(rows[j]).toBe(rows[j - 1]);
      }
    expect(measure(runHere, a, b, w, h, [16])).toBe(want);
  });

  it('a plane of 2500 rows is cut into jobs of 64 window rows, never more than 4 slots held', () => {
    const [w, h] = [16, 2500];
    const [a, b] = pair(w, h, 3);
    let held = 0;
    let most = 0;
    const run: SideRunner = (name, args) => {
      held++;
      most = Math.max(most, held);
      return () => {
        held--;
        return runHere(name, args)();
      };
    };
    expect(measure(run, a, b, w, h, [16])).toBe(ssim(a, b, w, h, 255));
    expect(most).toBe(4);
    expect(held).toBe(0);
  });

  it('with every slot held, frees one without waiting: answered jobs, else the latest not started, summed here', () => {
    const [w, h] = [23, 1500];
    const [a, b] = pair(w, h, 5);
    const want = ssim(a, b, w, h, 255);
    // Job i's state until joined: by `pattern` (a: answered, computed when offered; o: offered; r: running). An
    // offered or running job is computed when joined, reading its slot then, so a slot reused early shows.
    for (const pattern of ['o', 'r', 'a', 'ro', 'rro', 'aro', 'rrrr', 'oar']) {
      const joined: number[] = [];
      let held = 0;
      let most = 0;
      let jobs = 0;
      const run: SideRunner = (name, args) => {
        const i = jobs++;
        held++;
        most = Math.max(most, held);
        const state = STATES[pattern[i % pattern.length] as keyof typeof STATES];
        const done = state === 'answered' ? runHere(name, args)() : undefined;
        return Object.assign(
          () => {
            held--;
            joined.push(i);
            return done ?? runHere(name, args)();
          },
          { state: () => state },
        );
      };
      expect(measure(run, a, b, w, h, [16])).toBe(want);
      expect(most).toBe(4);
      expect(held).toBe(0);
      expect(joined.slice().sort((x, y) => x - y)).toEqual(Array.from({ length: jobs }, (_, i) => i));
      // The latest job not started is summed first (the one just offered, whose slot is then reused); a running
      // one is waited for only when no job is offered or answered, and then the oldest.
      if (pattern === 'o') expect(joined.slice(0, 3)).toEqual([3, 4, 5]);
      if (pattern === 'ro') expect(joined.slice(0, 4)).toEqual([3, 1, 5, 0]);
      if (pattern === 'aro') expect(joined.slice(0, 3)).toEqual([3, 0, 5]);
      if (pattern === 'rrrr') expect(joined.slice(0, 3)).toEqual([0, 1, 2]);
    }
  });

  it('slots made ahead (readySlots) are touched by a job joined before any slot is written', () => {
    const [w, h] = [40, 700];
    const [a, b] = pair(w, h, 9);
    const want = ssim(a, b, w, h, 255);
    // The touch job runs only when joined: had a slot been written before that, the zeros it writes (one value
    // per 1024, on rows the ramp makes non-zero) would change the value.
    const order: string[] = [];
    const late: SideRunner = (name, args) => {
      order.push(`offer ${name}`);
      return () => {
        order.push(`join ${name}`);
        return runHere(name, args)();
      };
    };
    readySlots(w, late);
    // Readied again for the same width: kept, no second job.
    readySlots(w, late);
    expect(order).toEqual(['offer touch-pages', 'offer ssim-ready']);
    expect(measure(late, a, b, w, h, [16])).toBe(want);
    expect(order.slice(2, 4)).toEqual(['join touch-pages', 'join ssim-ready']);
    expect(order.filter((o) => o.startsWith('join touch'))).toHaveLength(1);
    // The measurement kept its slots for the next one of that width: nothing to make.
    order.length = 0;
    readySlots(w, late);
    expect(order).toEqual([]);
    // Slots made for another width are dropped, their jobs joined, when a measurement takes slots of its own.
    readySlots(w + 1, late);
    expect(order).toEqual(['offer touch-pages', 'offer ssim-ready']);
    expect(measure(late, a, b, w, h, [16])).toBe(want);
    expect(order.slice(2, 4)).toEqual(['join touch-pages', 'join ssim-ready']);
    // Slots made for the width measured next are used, their jobs joined before the first write.
    const [c, d] = pair(w + 1, h, 10);
    order.length = 0;
    readySlots(w + 1, late);
    expect(measure(late, c, d, w + 1, h, [16])).toBe(ssim(c, d, w + 1, h, 255));
    expect(order.slice(0, 4)).toEqual([
      'offer touch-pages',
      'offer ssim-ready',
      'join touch-pages',
      'join ssim-ready',
    ]);
  });

  it('touchPages writes one value of every 4 KiB page of each array, and leaves zeros as they are', () => {
    const arrays = [new Float32Array(1024 * 3 + 1), new Float32Array(10)];
    expect(touchPages({ arrays })).toBe(4 + 1);
    for (const x of arrays) expect(x.every((v) => v === 0)).toBe(true);
  });

  it('refuses a value before every row was added', () => {
    const [a, b] = pair(20, 30, 1);
    const s = new SsimBands(runHere, a, 20, 30, 255);
    s.add(b, 29);
    expect(() => s.value()).toThrow(/29 of 30 rows/);
  });
});
