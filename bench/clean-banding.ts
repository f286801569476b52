// The banding part of the cleaning benchmark (bench/clean.bench.ts): stripes of known profile (narrow,
// periodic, and wide bands of 50–200 px) plus Gaussian noise σ = 3 on the benchmark's images, and the
// line-sensor sample against its truth file.
import { existsSync } from 'node:fs';
import { join } from 'node:path';
import { analyseBanding, subtractProfiles } from '../src-main/engine/clean';
import { cleanDecoded } from '../src-main/node/services/clean';
import { bandProfile, randomProfile, sineProfile } from '../test/clean/helpers';
import { asDecoded, clip, type Gray, gaussian, loadGray, psnr, QUICK } from './clean-shared';

/** Bands of random widths 50–200 px, zero mean, the given RMS. */
const bands = (n: number, rms: number, seed: number) => bandProfile(n, rms, 50, 200, seed);

/** Runs the section and logs its table. */
export async function bandingSection(images: Gray[], log: (s?: string) => void): Promise<void> {
  log('### Banding: detection and removal');
  log('');
  log(
    'Stripes of known profile plus Gaussian noise σ = 3, rounded to 8 bits; `clean --noise off --banding auto`.',
  );
  log('"Removed" is the share of the stripe energy taken out: 1 − ‖ŝ − s‖²/‖s‖².');
  log(
    'The wide-band pass (bands 50–200 px) is part of `--banding auto`: where its guards find the band edges uncertain it rebuilds the profile as a chain (used whole when it passes the level check; otherwise cut where a link is doubtful, each stretch between cuts keeping its own offset; a link where a quarter of the lines agree on no step is bridged with 0), and removes nothing when too few edges are certain (found: none).',
  );
  log('');
  log('| image | damage | found | strength (true) | period (true) | removed | PSNR before → after | time |');
  log('|---|---|---|---|---|---|---|---|');
  const cases: Array<{
    label: string;
    rows?: (n: number) => Float64Array;
    cols?: (n: number) => Float64Array;
    rms: number;
    period?: number;
  }> = [
    { label: 'column stripes RMS 3', cols: (n) => randomProfile(n, 3, 11), rms: 3 },
    { label: 'column stripes RMS 8', cols: (n) => randomProfile(n, 8, 12), rms: 8 },
    { label: 'row banding, period 12.5, RMS 4', rows: (n) => sineProfile(n, 4, 12.5), rms: 4, period: 12.5 },
    { label: 'wide column bands 50–200 px, RMS 4', cols: (n) => bands(n, 4, 21), rms: 4 },
    { label: 'wide row bands 50–200 px, RMS 4', rows: (n) => bands(n, 4, 22), rms: 4 },
    { label: 'clean (no damage)', rms: 0 },
  ];
  for (const g of images.slice(0, QUICK ? 1 : 4))
    for (const c of cases) {
      const gauss = gaussian(77);
      const rp = c.rows ? c.rows(g.height) : null;
      const cp = c.cols ? c.cols(g.width) : null;
      const dam = new Float32Array(g.data.length);
      for (let y = 0; y < g.height; y++)
        for (let x = 0; x < g.width; x++)
          dam[y * g.width + x] =
            c.rms === 0
              ? g.data[y * g.width + x]
              : clip(g.data[y * g.width + x] + (rp ? rp[y] : 0) + (cp ? cp[x] : 0) + 3 * gauss());
      const t0 = performance.now();
      const a = analyseBanding(dam, g.width, g.height, 'auto', { maxValue: 255 });
      const out = subtractProfiles(
        dam,
        g.width,
        g.height,
        a.removeRows ? a.rows.profile : null,
        a.removeColumns ? a.columns.profile : null,
      ).map(clip);
      const ms = performance.now() - t0;
      const truthP = rp ?? cp;
      const est = rp ? (a.removeRows ? a.rows.profile : null) : a.removeColumns ? a.columns.profile : null;
      let removed = '—';
      if (truthP) {
        let e0 = 0;
        let e1 = 0;
        for (let i = 0; i < truthP.length; i++) {
          e0 += truthP[i] ** 2;
          e1 += (truthP[i] - (est ? est[i] : 0)) ** 2;
        }
        removed = `${(100 * (1 - e1 / e0)).toFixed(1)} %`;
      }
      const axis = rp ? a.rows : a.columns;
      const before = psnr(dam, g.data);
      const after = psnr(out, g.data);
      log(
        `| ${g.name} | ${c.label} | ${a.direction} | ${c.rms ? `${axis.strength.toFixed(2)} (${c.rms})` : `— (input unchanged: ${Number.isFinite(psnr(out, dam)) ? `${psnr(out, dam).toFixed(1)} dB` : 'bit-identical'})`} | ${c.period ? `${axis.period?.toFixed(2) ?? 'none'} (${c.period})` : '—'} | ${removed} | ${Number.isFinite(before) ? `${before.toFixed(2)} → ${after.toFixed(2)}` : '∞ → ∞'} | ${ms.toFixed(0)} ms |`,
      );
    }
  const ls = join('samples', 'line-sensor-banding.png');
  const lsTruth = join('samples', 'line-sensor-banding-truth.png');
  if (existsSync(ls) && existsSync(lsTruth)) {
    const d = await loadGray(ls, 'samples/line-sensor-banding.png');
    const t = await loadGray(lsTruth, 'truth');
    const t0 = performance.now();
    const res = await cleanDecoded(asDecoded(d, d.data), { noise: 'off', banding: 'auto', workers: 2 });
    const ms = performance.now() - t0;
    const both = await cleanDecoded(asDecoded(d, d.data), { noise: 'auto', banding: 'auto', workers: 2 });
    const b = res.report.banding;
    log(
      `| ${d.name} (sensor model, truth file) | column fixed pattern + row banding | ${b.direction} | rows ${b.rows?.strength.toFixed(2)}, columns ${b.columns?.strength.toFixed(2)} | rows ${b.rows?.period?.toFixed(1) ?? 'none'} | — | ${psnr(d.data, t.data).toFixed(2)} → ${psnr(res.planes[0], t.data).toFixed(2)} (with noise removal too: ${psnr(both.planes[0], t.data).toFixed(2)}) | ${ms.toFixed(0)} ms |`,
    );
  }
  log('');
  wideBandSeeds(images, log);
  log('');
}

/**
 * Wide bands on every image, both axes, seeds 1–4 or RANKFOLD_BENCH_BAND_SEEDS (RMS 4, noise σ = 3; `--banding auto`): how often they are
 * removed, and whether any image is made worse (issue 16's target: ≥ 80 % of the stripe energy removed, with
 * the PSNR rising).
 */
function wideBandSeeds(images: Gray[], log: (s?: string) => void) {
  // RANKFOLD_BENCH_BAND_SEEDS=5,6,7,8 runs held-out seeds (the constants were chosen on 1–4).
  const asked = (process.env.RANKFOLD_BENCH_BAND_SEEDS ?? '').split(',').filter(Boolean).map(Number);
  const seeds = asked.length ? asked : QUICK ? [1] : [1, 2, 3, 4];
  log(`Wide bands 50–200 px, RMS 4, noise σ = 3, seeds ${seeds.join(', ')}, both axes, \`--banding auto\`:`);
  log('');
  log('| image | cases | ≥ 80 % removed | removed, median where acted | PSNR change, worst | made worse |');
  log('|---|---|---|---|---|---|');
  for (const g of images) {
    let good = 0;
    let worse = 0;
    let worst = Number.POSITIVE_INFINITY;
    const acted: number[] = [];
    for (const axis of ['rows', 'columns'] as const)
      for (const seed of seeds) {
        const truth = bands(axis === 'rows' ? g.height : g.width, 4, 100 + seed);
        const gauss = gaussian(300 + seed);
        const dam = g.data.map((v, i) =>
          clip(v + truth[axis === 'rows' ? Math.floor(i / g.width) : i % g.width] + 3 * gauss()),
        );
        const a = analyseBanding(dam, g.width, g.height, 'auto', { maxValue: 255 });
        const est =
          axis === 'rows'
            ? a.removeRows
              ? a.rows.profile
              : null
            : a.removeColumns
              ? a.columns.profile
              : null;
        const out = subtractProfiles(
          dam,
          g.width,
          g.height,
          axis === 'rows' ? est : null,
          axis === 'columns' ? est : null,
        ).map(clip);
        let e0 = 0;
        let e1 = 0;
        for (let i = 0; i < truth.length; i++) {
          e0 += truth[i] ** 2;
          e1 += (truth[i] - (est ? est[i] : 0)) ** 2;
        }
        const removed = 1 - e1 / e0;
        const change = psnr(out, g.data) - psnr(dam, g.data);
        if (est) acted.push(removed);
        if (removed >= 0.8 && change > 0) good++;
        if (change < -0.005) worse++;
        worst = Math.min(worst, change);
      }
    acted.sort((x, y) => x - y);
    const median = acted.length ? `${(100 * acted[acted.length >> 1]).toFixed(1)} % (${acted.length})` : '—';
    log(`| ${g.name} | ${2 * seeds.length} | ${good} | ${median} | ${worst.toFixed(2)} dB | ${worse} |`);
  }
  log('');
}
