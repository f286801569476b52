/**
 * Every option a request or a command line can carry, declared once: its type, range, default, unit, a
 * one-line doc and its CLI flag. The runtime validators ({@link checkOption}), the CLI parsers
 * ({@link parseOptionText}) and the `--help` lines ({@link helpLine}) all read these declarations, so the
 * CLI, IPC and HTTP accept the same values and refuse the rest with the same message, in the one format of
 * ./validate: `Expected integer between 1 and 65535 for rank but received 0 of type number`.
 *
 * An option's `name` is what messages call it: the CLI flag without its dashes, on every transport.
 */
import { checkOneOf, invalidParameterError, is } from './validate';

interface OptionBase {
  /** Name in messages; also the CLI flag (`--${name}`). */
  name: string;
  /** One line for `--help` and the API docs. */
  doc: string;
  /** Placeholder in `--help`, e.g. `K` or `N`. */
  arg?: string;
}

/** An integer or a real number in an inclusive range. */
export interface NumberOption extends OptionBase {
  type: 'integer' | 'number';
  min: number;
  max: number;
  default?: number;
  unit?: string;
  /** What is expected, when the generated `integer between 1 and 9` reads badly. */
  expected?: string;
}

/** One of a few words. */
export interface EnumOption<T extends string = string> extends OptionBase {
  type: 'enum';
  values: readonly T[];
  default?: T;
}

export type OptionDecl = NumberOption | EnumOption;

const num = (o: Omit<NumberOption, 'type'>): NumberOption => ({ type: 'number', ...o });
const int = (o: Omit<NumberOption, 'type'>): NumberOption => ({ type: 'integer', ...o });
const oneOf = <T extends string>(o: Omit<EnumOption<T>, 'type'>): EnumOption<T> => ({ type: 'enum', ...o });

/** The options of `compress`, `compress --stack`, `batch`, `inspect`, `expand` and the app's requests. */
export const OPTIONS = {
  // Budgets (exactly one per request; stack mode lets the floors combine with a size).
  rank: int({
    name: 'rank',
    arg: 'K',
    min: 1,
    max: 65535,
    doc: 'keep K singular components per plane (per tile when tiled)',
  }),
  budgetBytes: int({
    name: 'budget',
    min: 64,
    max: Number.MAX_SAFE_INTEGER,
    unit: 'bytes',
    expected: 'a budget of at least 64 bytes',
    doc: 'at most this many bytes on disk',
  }),
  budgetPercent: num({
    name: 'budget',
    min: 0.001,
    max: 100,
    unit: '%',
    expected: 'a percentage between 0.001 and 100',
    doc: 'at most this share of the raw sample bytes',
  }),
  bpp: num({
    name: 'bpp',
    arg: 'X',
    min: 0.001,
    max: 64,
    unit: 'bits per pixel',
    doc: 'at most X bits per pixel on disk',
  }),
  minPsnr: num({
    name: 'min-psnr',
    arg: 'DB',
    min: 1,
    max: 200,
    unit: 'dB',
    doc: 'the smallest file found whose PSNR is at least DB',
  }),
  minSsim: num({
    name: 'min-ssim',
    arg: 'S',
    min: 0.01,
    max: 1,
    doc: 'the smallest file found whose SSIM is at least S',
  }),
  stackRank: int({
    name: 'rank',
    arg: 'K',
    min: 0,
    max: 64,
    doc: 'eigen-frames per channel (0: the mean frame only)',
  }),
  /** Whole-plane (0) and 'auto' are accepted beside this range: see checkTile. */
  tile: int({
    name: 'tile',
    arg: 'N|auto|0',
    min: 16,
    max: 512,
    expected: 'integer between 16 and 512',
    doc: 'tile side 16–512, auto (best of 32, 64, 128 for the budget) or 0 for whole planes',
  }),
  layers: oneOf({
    name: 'layers',
    values: ['auto', 'base'] as const,
    default: 'auto',
    doc: 'low-rank base plus a wavelet residual (auto) or the base only',
  }),
  // Input.
  page: int({ name: 'page', arg: 'N', min: 0, max: 100_000, default: 0, doc: 'TIFF page to read, from 0' }),
  pixelLimit: int({
    name: 'pixel-limit',
    arg: 'N',
    min: 1,
    max: 2 ** 42,
    doc: 'refuse inputs with more pixels than N',
  }),
  frame: int({
    name: 'frame',
    arg: 'N',
    min: 0,
    max: 65535,
    doc: 'position of a frame in a stack file, from 0 (the API)',
  }),
  /** `expand --frame I`: frames as people count them, from 1 (docs/stack.md "Frame numbers"). */
  frameNumber: int({
    name: 'frame',
    arg: 'I',
    min: 1,
    max: 65536,
    doc: 'frame of a stack file, counted from 1',
  }),
  // The app's factorisation.
  maxRank: int({ name: 'maxRank', min: 1, max: 4096, doc: 'largest rank to compute per plane' }),
  // Cleaning.
  banding: oneOf({
    name: 'banding',
    values: ['auto', 'rows', 'columns', 'both', 'off'] as const,
    default: 'auto',
    doc: 'row/column banding to remove',
  }),
  method: oneOf({
    name: 'method',
    values: ['groups', 'tiles'] as const,
    default: 'groups',
    doc: 'patch groups or overlapping tiles',
  }),
  cleanRank: int({
    name: 'rank',
    arg: 'K',
    min: 0,
    max: 144,
    doc: 'keep exactly K components per patch group',
  }),
  threshold: num({
    name: 'threshold',
    arg: 'T',
    min: 0,
    max: 1e9,
    unit: 'grey levels',
    doc: 'keep singular values above T per group',
  }),
  patch: int({ name: 'patch', arg: 'N', min: 4, max: 12, doc: 'patch side in pixels' }),
  groupSize: int({ name: 'group-size', arg: 'N', min: 8, max: 96, doc: 'patches per group' }),
  cleanTile: int({ name: 'tile', arg: 'N', min: 8, max: 128, doc: 'tile side for --method tiles' }),
  workers: int({
    name: 'workers',
    arg: 'N',
    min: 0,
    max: 64,
    default: 2,
    doc: 'worker threads; the output is identical for any number',
  }),
  // Batch and serve.
  jobs: int({ name: 'jobs', arg: 'N', min: 1, max: 256, doc: 'files compressed at once' }),
  timeout: num({
    name: 'timeout',
    arg: 'S',
    min: 0,
    max: 7 * 24 * 3600,
    unit: 's',
    doc: 'per-file time limit',
  }),
  port: int({ name: 'port', arg: 'N', min: 1024, max: 65535, doc: 'port on 127.0.0.1' }),
  // Batch: a total for the whole collection (issue #13; contract/budget.ts parses the SIZE text).
  totalBytes: int({
    name: 'total',
    min: 64,
    max: Number.MAX_SAFE_INTEGER,
    unit: 'bytes',
    expected: 'a total of at least 64 bytes',
    doc: 'the .rkf files of the whole folder together take at most this many bytes',
  }),
  totalPercent: num({
    name: 'total',
    min: 0.001,
    max: 100,
    unit: '%',
    expected: 'a percentage between 0.001 and 100',
    doc: 'the whole folder takes at most this share of the raw sample bytes of all inputs',
  }),
  favour: oneOf({
    name: 'favour',
    values: ['floor', 'mean'] as const,
    default: 'floor',
    doc: 'floor: the highest PSNR every file reaches; mean: the highest mean PSNR (equal slopes)',
  }),
  reserve: num({
    name: 'reserve',
    arg: 'P',
    min: 0,
    max: 50,
    default: 1,
    unit: '%',
    doc: 'share of the total a shared plan (--plan) holds back for files that need more than planned',
  }),
} as const;

/** Highest noise σ accepted, in grey levels (the 16-bit sample scale). */
const MAX_NOISE = 65535;
const NOISE_EXPECTED = 'auto, off or a noise σ above 0 in grey levels (e.g. 8)';

function expectedOf(d: NumberOption): string {
  return d.expected ?? `${d.type} between ${d.min} and ${d.max}`;
}

/** Check a value against its declaration. @throws UsageError in the one format. */
export function checkOption(d: NumberOption, v: unknown): number;
export function checkOption<T extends string>(d: EnumOption<T>, v: unknown): T;
export function checkOption(d: OptionDecl, v: unknown): number | string {
  if (d.type === 'enum') return checkOneOf(d.name, v, d.values);
  const ok = d.type === 'integer' ? is.integer(v) : is.number(v);
  if (!ok || !is.inRange(v as number, d.min, d.max)) throw invalidParameterError(d.name, expectedOf(d), v);
  return v as number;
}

/** Check an optional value: undefined stays undefined. */
export function checkOptional<T>(d: OptionDecl, v: unknown): T | undefined {
  return v === undefined ? undefined : (checkOption(d as NumberOption, v) as T);
}

/**
 * Turn CLI text into the value a request would carry, so that `--rank 2.5` and `{ rank: 2.5 }` get the same
 * message: decimal text becomes a number (for integer options, plain decimals only, so `0x10` and `1e3`
 * stay text); anything else stays text, and {@link checkOption} names it as received.
 */
export function optionValue(d: OptionDecl, text: string | undefined): unknown {
  if (text === undefined || d.type === 'enum') return text;
  const t = text.trim();
  if (d.type === 'integer') return /^[+-]?\d+(?:\.\d+)?$/.test(t) ? Number(t) : text;
  return t !== '' && Number.isFinite(Number(t)) ? Number(t) : text;
}

/** Parse and check one CLI option's text. @throws UsageError naming the option. */
export function parseOptionText(d: NumberOption, text: string | undefined): number;
export function parseOptionText<T extends string>(d: EnumOption<T>, text: string | undefined): T;
export function parseOptionText(d: OptionDecl, text: string | undefined): number | string {
  return checkOption(d as NumberOption, optionValue(d, text));
}

/** An option's range as `--help` writes it: `1–65535`, or `1–200 dB` with `unit`. */
export function rangeText(d: NumberOption, unit = false): string {
  return `${d.min}–${d.max}${unit && d.unit ? ` ${d.unit}` : ''}`;
}

/** `noise`: 'auto', 'off' or σ above 0 and at most {@link MAX_NOISE} grey levels. */
export function checkNoise(v: unknown): 'auto' | 'off' | number {
  if (v === 'auto' || v === 'off') return v;
  if (!is.number(v) || !(v > 0) || v > MAX_NOISE) throw invalidParameterError('noise', NOISE_EXPECTED, v);
  return v;
}

/** Parse `--noise auto|off|SIGMA` (case-insensitive words). */
export function parseNoiseText(text: string): 'auto' | 'off' | number {
  const t = text.trim().toLowerCase();
  if (t === 'auto' || t === 'off') return t;
  return checkNoise(t !== '' && Number.isFinite(Number(t)) ? Number(t) : text);
}

// ── Noise model of `clean` (issue 16) ─────────────────────────────────────────────────────────────────
/** The options of `clean`'s noise model, declared once like {@link OPTIONS}. */
export const CLEAN_NOISE_OPTIONS = {
  noiseModel: oneOf({
    name: 'noise-model',
    values: ['auto', 'gaussian', 'poisson-gaussian'] as const,
    default: 'auto',
    doc: 'noise that is the same at every brightness (gaussian), grows with it (poisson-gaussian), or chosen from the scan',
  }),
  /** The Poisson gain a of σ²(x) = a·x + b (`--noise A,B`). */
  noiseGain: num({
    name: 'noise',
    min: 0,
    max: 65535,
    expected: 'A,B with A ≥ 0 (grey levels), B a number, and a·x + b > 0 somewhere (e.g. 0.45,4)',
    doc: 'Poisson gain a of the noise model σ²(x) = a·x + b',
  }),
  /** The variance b at x = 0 of σ²(x) = a·x + b (`--noise A,B`); may be negative (an offset black level). */
  noiseFloor: num({
    name: 'noise',
    min: -(65535 ** 2),
    max: 65535 ** 2,
    expected: 'A,B with A ≥ 0 (grey levels), B a number, and a·x + b > 0 somewhere (e.g. 0.45,4)',
    doc: 'variance b at zero of the noise model σ²(x) = a·x + b',
  }),
} as const;

/** `--noise-colour`: white noise, the spectrum measured from the scan, or decided from the measurement (issue 16). */
export const NOISE_COLOUR_OPTION = oneOf({
  name: 'noise-colour',
  values: ['auto', 'white', 'measured'] as const,
  default: 'auto',
  doc: 'noise that is independent from pixel to pixel (white), spatially correlated with the spectrum measured from the scan (measured), or decided from that measurement',
});

/** A given noise model σ²(x) = a·x + b: a ≥ 0, b finite, and a positive variance somewhere on 0…65535. */
export function checkNoiseLevel(v: unknown): { a: number; b: number } {
  const d = CLEAN_NOISE_OPTIONS.noiseGain;
  if (!is.plainObject(v)) throw invalidParameterError('noise', d.expected as string, v);
  const a = checkOption(d, v.a);
  const b = checkOption(CLEAN_NOISE_OPTIONS.noiseFloor, v.b);
  if (!(a * 65535 + b > 0)) throw invalidParameterError('noise', d.expected as string, `${a},${b}`);
  return { a, b };
}

/** `--noise A,B` as the request's `noiseLevel`, or null when the text is not a pair (then see parseNoiseText). */
export function parseNoiseLevelText(text: string): { a: number; b: number } | null {
  const parts = text.split(',');
  if (parts.length !== 2) return null;
  const value = (t: string) => (t.trim() !== '' && Number.isFinite(Number(t)) ? Number(t) : t);
  return checkNoiseLevel({ a: value(parts[0]), b: value(parts[1]) });
}
