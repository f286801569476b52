/** `rankfold clean IN -o OUT`: remove sensor noise and row/column banding, and show what was removed. */
import {
  type BandingMode,
  CLEAN_NOISE_OPTIONS,
  CLEANING_CAUTION,
  type CleanReport,
  checkCleanOptions,
  type DenoiseMethod,
  NOISE_COLOUR_OPTION,
  type NoiseColourChoice,
  type NoiseModelChoice,
  type NumberOption,
  OPTIONS,
  optionValue,
  parseNoiseLevelText,
  parseNoiseText,
  rangeText,
  UsageError,
} from '../../../contract';
import { cleanFile } from '../../services/clean';
import { type Command, flags, parseCommandArgs } from '../args/command';

const options = flags(
  'output noise noise-model noise-colour banding rank threshold method patch group-size tile workers removed profile page pixel-limit',
  'json force',
);

const help = `Usage: rankfold clean IN -o OUT [--noise auto|off|SIGMA|A,B] [--noise-model M] [--banding auto|rows|columns|both|off]
                      [--rank K] [--removed REMOVED.png] [--profile PROFILE.csv] [--json] [--force]

Remove broadband sensor or film-grain noise and row/column banding from a scan, and keep what was
removed so you can check that no content went with it. OUT (PNG or TIFF) keeps the input's bit depth,
ICC profile, resolution and orientation.

Noise (local low rank): similar patches are grouped by block matching, each group's singular values are
cut at the Gavish–Donoho optimal hard threshold (2014), and the groups are blended back with weights.
  --noise auto        estimate σ from the image (default); nothing is done below rounding level
  --noise SIGMA       the noise σ in grey levels of the input (per colour channel)
  --noise off         do not denoise
  --noise A,B         the noise model σ²(x) = a·x + b (grey levels of the input): noise that grows with
                      brightness, as photon noise does (e.g. 0.45,4)
  --noise-model M     ${CLEAN_NOISE_OPTIONS.noiseModel.values.join('|')} (default auto): with auto, a and b are
                      fitted from the scan, and when the noise clearly grows with brightness the scan is
                      cleaned under a variance-stabilising transform (generalized Anscombe); gaussian keeps
                      one σ for every brightness
  --noise-colour C    ${NOISE_COLOUR_OPTION.values.join('|')} (default auto): with auto, the noise spectrum is
                      measured on flat areas and, when the noise is clearly correlated from pixel to pixel
                      (JPEG, demosaicking, resampling), each frequency is cleaned at its own noise level;
                      white treats every frequency alike; measured always uses the measured spectrum
  --rank K            keep exactly K components per patch group instead of the threshold (${rangeText(OPTIONS.cleanRank)})
  --threshold T       keep singular values above T (grey levels) per group instead of the rule
  --method M          groups (default) or tiles (overlapping tiles with Hann blending; simpler, weaker)
  --patch N           patch side ${rangeText(OPTIONS.patch)} (default from σ: 6, 7 or 8);  --group-size N  patches per group ${rangeText(OPTIONS.groupSize)}
  --tile N            tile side ${rangeText(OPTIONS.cleanTile)} for --method tiles (default from σ)
  --workers N         worker threads, ${rangeText(OPTIONS.workers)} (default ${OPTIONS.workers.default}); the output is identical for any number

Banding (stripes along rows or columns, removed as a rank-one pattern):
  --banding auto      detect and remove what is found (default); a clean image is left untouched
  --banding rows|columns|both   remove that direction even if the detector is unsure
  --banding off       leave banding alone

Outputs:
  -o, --output FILE   cleaned image, .png or .tif (required)
  --removed FILE      the removed part (input − output) as an 8-bit PNG: grey 128 = nothing removed;
                      the scale is printed and stored in the PNG's Comment text
  --profile FILE      the subtracted stripe profiles as CSV (axis,index,offset per channel), then the
                      fitted noise model (noise-a, noise-b) and its points (noise-level, noise-sigma, …)
  --json              print the report as one JSON object (noiseSigma, threshold, rank, banding,
                      psnrChange = PSNR of OUT against IN, …)
  --force             overwrite existing outputs
  --page N            TIFF page to read, from 0;  --pixel-limit N  refuse larger inputs

The input is never modified; outputs are written atomically and never overwritten without --force.
Cleaning is never applied by any other command.

${CLEANING_CAUTION}
`;

const fmt = (x: number | null | undefined, d = 2) =>
  x === null || x === undefined ? 'n/a' : Number.isFinite(x) ? x.toFixed(d) : '∞';

export function formatCleanReport(r: CleanReport): string {
  const lines = [
    `${r.input} → ${r.output}`,
    `  ${r.width}×${r.height}, ${r.channels} channel(s), ${r.bitDepth}-bit`,
  ];
  const b = r.banding;
  if (b.mode === 'off') lines.push('  banding: not checked (--banding off)');
  else if (b.direction === 'none')
    lines.push(
      `  banding: none found (rows RMS ${fmt(b.rows?.strength)}, columns RMS ${fmt(b.columns?.strength)} grey levels; below the detection test)`,
    );
  else
    lines.push(
      `  banding: removed ${b.direction}, RMS ${fmt(b.strength)} grey levels${b.period ? `, period ${fmt(b.period, 1)} px` : ', no dominant period'}`,
    );
  if (r.method === 'off') lines.push(`  noise: ${r.noiseSkipped ?? 'not removed (--noise off)'}`);
  else {
    lines.push(
      `  noise: σ ${fmt(r.noiseSigma)} grey levels (${r.noiseSource}${r.noiseSigmaMedianRule !== null ? `; median-rule cross-check ${fmt(r.noiseSigmaMedianRule)}` : ''})`,
    );
    const m = r.noiseModel;
    if (m)
      lines.push(
        `  noise model: σ²(x) = ${fmt(m.a, 4)}·x + ${fmt(m.b, 3)} (${m.source}); ${m.model === 'poisson-gaussian' ? 'cleaned under the generalized Anscombe transform' : 'one σ for all levels'}: ${m.reason}`,
      );
    if (m?.bNote) lines.push(`  noise model: ${m.bNote}`);
    const nc = r.noiseColour;
    if (nc)
      lines.push(
        `  noise colour: ${nc.colour} (${nc.source}; flatness ${fmt(nc.flatness)}, neighbour correlation ${fmt(nc.lagOne)}, ${nc.blocks} flat blocks): ${nc.reason}`,
      );
    const rank = r.rank;
    const how =
      rank?.fixed !== null && rank?.fixed !== undefined
        ? `fixed rank ${rank.fixed}`
        : `threshold ${fmt(r.threshold, 1)} (Gavish–Donoho)`;
    if (r.method === 'groups' && r.params)
      lines.push(
        `  method: patch groups ${r.params.patch}×${r.params.patch}, ${r.params.groupSize} patches, ${how}; rank per group ${rank?.min}–${rank?.max}, mean ${fmt(rank?.mean, 2)} over ${rank?.groups} groups`,
      );
    else
      lines.push(
        `  method: tiles of ${r.params?.tile}px, ${how}; rank per tile ${rank?.min}–${rank?.max}, mean ${fmt(rank?.mean, 2)}`,
      );
  }
  lines.push(
    r.psnrChange === null
      ? '  output is identical to the input (nothing removed)'
      : `  change: PSNR of output against input ${fmt(r.psnrChange)} dB; RMS removed ${fmt(r.removedRms)} grey levels; ${r.changedSamples} samples changed`,
  );
  if (r.removed)
    lines.push(`  removed part: ${r.removed} (grey = 128 + ${fmt(r.removedScale, 3)} × removed)`);
  if (r.profile) lines.push(`  stripe profile: ${r.profile}`);
  lines.push(
    `  time: decode ${fmt(r.timings.decodeMs, 0)} ms, banding ${fmt(r.timings.bandingMs, 0)} ms, denoise ${fmt(r.timings.denoiseMs, 0)} ms, encode ${fmt(r.timings.encodeMs, 0)} ms`,
  );
  return `${lines.join('\n')}\n`;
}

export const command: Command = {
  name: 'clean',
  summary: 'remove sensor noise and row/column banding, and show what was removed',
  help,
  async run(argv, io) {
    const { values: v, positionals } = parseCommandArgs('clean', argv, options);
    const input = positionals[0];
    if (!input) throw new UsageError('clean: missing input file. See `rankfold clean --help`.');
    const output = v.output as string | undefined;
    if (!output) throw new UsageError('clean: missing -o OUT. See `rankfold clean --help`.');
    const str = (k: string) => v[k] as string | undefined;
    const num = (d: NumberOption) => optionValue(d, str(d.name)) as number | undefined;
    // Text becomes the values a request would carry; the contract's one validator then checks them all.
    const noiseText = str('noise');
    const noiseLevel = noiseText === undefined ? null : parseNoiseLevelText(noiseText);
    const cleanOptions = checkCleanOptions({
      noise: noiseText !== undefined && !noiseLevel ? parseNoiseText(noiseText) : 'auto',
      ...(noiseLevel ? { noiseLevel } : {}),
      noiseModel: str('noise-model') as NoiseModelChoice | undefined,
      noiseColour: str('noise-colour') as NoiseColourChoice | undefined,
      banding: (str('banding') ?? 'auto') as BandingMode,
      rank: num(OPTIONS.cleanRank),
      threshold: num(OPTIONS.threshold),
      method: str('method') as DenoiseMethod | undefined,
      patch: num(OPTIONS.patch),
      groupSize: num(OPTIONS.groupSize),
      tile: num(OPTIONS.cleanTile),
      workers: num(OPTIONS.workers),
      removed: str('removed'),
      profile: str('profile'),
      page: num(OPTIONS.page),
      pixelLimit: num(OPTIONS.pixelLimit),
      force: Boolean(v.force),
    });
    const report = await cleanFile(input, output, cleanOptions, {
      onProgress:
        io.isTTY && !v.json
          ? (stage, f) => io.stderr(`\r${stage.padEnd(8)} ${Math.round(f * 100)}%`)
          : undefined,
    });
    if (io.isTTY && !v.json) io.stderr('\r                \r');
    for (const w of report.warnings ?? []) io.stderr(`warning: ${w}\n`);
    if (v.json) {
      io.stdout(`${JSON.stringify({ ...report, caution: CLEANING_CAUTION })}\n`);
      io.stderr(`${CLEANING_CAUTION}\n`);
    } else io.stdout(`${formatCleanReport(report)}${CLEANING_CAUTION}\n`);
    return 0;
  },
};
