/**
 * Axis ticks for the report's histograms: steps of 1, 2 or 5 times a power of ten, so labels never repeat
 * ("20.12 20.12" from five evenly spaced ticks over a narrow range printed at two decimals, issue #14) and
 * every label is as short as its step allows. The 1-2-5 rule is common practice for chart axes (from memory).
 */

/** Ticks within [lo, hi], at most `max` of them, each with its label. */
export function niceTicks(lo: number, hi: number, max = 6): { value: number; label: string }[] {
  if (!(hi > lo)) return [{ value: lo, label: trim(lo, 2) }];
  const raw = (hi - lo) / Math.max(1, max - 1);
  const p = 10 ** Math.floor(Math.log10(raw));
  // The finest 1-2-5 step whose ticks inside [lo, hi] number at most `max`.
  const count = (s: number) => Math.floor(hi / s + 1e-9) - Math.ceil(lo / s - 1e-9) + 1;
  const step = [0.5, 1, 2, 5, 10, 20].map((m) => m * p).find((s) => count(s) <= max) ?? 20 * p;
  const decimals = Math.max(0, -Math.floor(Math.log10(step) + 1e-9));
  const out: { value: number; label: string }[] = [];
  for (let v = Math.ceil(lo / step - 1e-9) * step; v <= hi + step * 1e-9; v += step)
    out.push({ value: v, label: trim(v, decimals) });
  return out;
}

function trim(v: number, decimals: number): string {
  const t = v.toFixed(decimals);
  return t === '-0' ? '0' : t;
}
