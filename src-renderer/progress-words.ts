/**
 * Progress in words a user understands: the back end's stage names (engine and services) turned into
 * plain phrases, and the determinate fraction and time left of a job the page is waiting on. No DOM.
 *
 * Where the back end reports no usable fraction (a whole-plane encode reports one step), the fraction
 * comes from how long the same kind of job took last time on this scan, or a first guess by scan size,
 * and never passes 95 % until the job ends; the time left is then marked "about".
 */

/** Stage names the back end reports, in plain words (unknown stages read as "working"). */
const STAGE_WORDS: [RegExp, string | ((m: RegExpExecArray) => string)][] = [
  [/^decod(e|ing)$/, 'reading the scan'],
  [/^decoded$/, 'scan read'],
  [/^factoring plane (\w+)$/, (m) => `factorising the ${m[1]} plane`],
  [/^factor(ed)?$/, 'factorising'],
  [/^probe$/, 'trying tile sizes'],
  [/^allocate$/, 'choosing ranks and precision'],
  [/^layers$/, 'choosing ranks and precision'],
  [/^spectrum$/, 'measuring the singular values'],
  [/^floor ([\d.]+) dB$/, (m) => `finding the smallest file ≥ ${m[1]} dB`],
  [/^(write|encode)$/, 'writing the file'],
  [/^measure$/, 'measuring the result'],
  [/^compare$/, 'comparing with other formats'],
  [/^banding$/, 'looking for bands and stripes'],
  [/^denoise$/, 'removing noise'],
  [/^done$/, 'finishing'],
];

/** A back-end stage name in plain words. */
export function stageWords(stage: string): string {
  for (const [re, words] of STAGE_WORDS) {
    const m = re.exec(stage);
    if (m) return typeof words === 'string' ? words : words(m);
  }
  return 'working';
}

/** Most of the bar a guessed fraction may fill before the job ends. */
const GUESS_CEILING = 0.95;

/**
 * The fraction to show: the reported one, or the elapsed share of the expected time (at most 95 %),
 * whichever is further along.
 */
export function shownFraction(reported: number, elapsedMs: number, expectedMs: number): number {
  const guessed = expectedMs > 0 ? Math.min(GUESS_CEILING, elapsedMs / expectedMs) : 0;
  return Math.max(0, Math.min(1, Math.max(reported, guessed)));
}

/** Time left in words: "about 12 s left", "about 2 min left", or "" when it cannot be said. */
export function timeLeftText(fraction: number, elapsedMs: number, expectedMs: number): string {
  let left: number;
  if (fraction >= GUESS_CEILING && elapsedMs >= expectedMs) return 'nearly done';
  if (fraction > 0.05) left = (elapsedMs * (1 - fraction)) / fraction;
  else if (expectedMs > 0) left = expectedMs - elapsedMs;
  else return '';
  const s = Math.max(1, Math.round(left / 1000));
  return s < 90 ? `about ${s} s left` : `about ${Math.round(s / 60)} min left`;
}

/** The status line of a job: what it is for, its stage in words, the percentage and the time left. */
export function progressLine(p: {
  label: string;
  stage?: string;
  fraction: number;
  elapsedMs: number;
  expectedMs: number;
}): string {
  const what = p.label.replace(/…$/, '');
  const stage = p.stage ? ` — ${stageWords(p.stage)}` : '';
  const left = timeLeftText(p.fraction, p.elapsedMs, p.expectedMs);
  return `${what}${stage}… ${Math.round(100 * p.fraction)} %${left ? ` · ${left}` : ''}`;
}

/** First guesses of a job's length per megapixel, before one has run on this scan (this machine, 2 cores). */
const GUESS_MS_PER_MEGAPIXEL: Record<string, number> = {
  factors: 2500,
  evaluate: 4000,
  search: 25_000,
  clean: 12_000,
  save: 4000,
  stack: 1000,
};

/** Expected milliseconds of a job of `kind`: the last run of that kind, else a guess by scan size. */
export function expectedMs(kind: string, megapixels: number, last?: number): number {
  if (last !== undefined) return last;
  return Math.max(1000, (GUESS_MS_PER_MEGAPIXEL[kind] ?? 3000) * Math.max(0.1, megapixels));
}
