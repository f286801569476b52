/**
 * What Save will write, in one sentence, before it writes it: the kind of file, its name, the budget and
 * rank, and the size — measured (the encoder's own file at this budget), estimated, or not yet known.
 * No DOM; ./save-panel.ts puts the sentence in place.
 */
import type { Budget } from '../src-main/contract';
import type { ShownFigures } from './format';
import { formatBytes, formatPsnr } from './format';

export type SaveKind = 'rkf' | 'expanded' | 'cleaned' | 'removed';

/** A budget as the page says it. */
function budgetText(b: Budget): string {
  switch (b.kind) {
    case 'rank':
      return `rank ${b.rank}`;
    case 'psnr':
      return `at least ${b.db} dB PSNR`;
    case 'ssim':
      return `SSIM at least ${b.value}`;
    case 'bytes':
      return `at most ${formatBytes(b.bytes)}`;
    case 'percent':
      return `at most ${b.percent} % of the raw size`;
    case 'bpp':
      return `at most ${b.bpp} bits per pixel`;
  }
}

export interface SavePlanInput {
  kind: SaveKind;
  /** The open scan's file name. */
  scanName: string;
  bitDepth: 8 | 16;
  budget: Budget;
  tiled: boolean;
  tile: number;
  /** The figures on show (undefined before any). */
  shown?: ShownFigures;
  /** Whether a cleaning result is on hand (the cleaned image and removed part use the Clean settings). */
  cleanedReady: boolean;
}

const sameBudget = (a: Budget, b: Budget) => JSON.stringify(a) === JSON.stringify(b);

/** The file name Save suggests (the back end uses the same stems). */
export function suggestedName(kind: SaveKind, scanName: string, bitDepth: 8 | 16): string {
  const stem = scanName.replace(/\.[^.]+$/, '');
  const ext = bitDepth === 16 ? '.tif' : '.png';
  if (kind === 'rkf') return `${stem}.rkf`;
  if (kind === 'removed') return `${stem}-removed.png`;
  return `${stem}-${kind}${ext}`;
}

/** The sentence that says what Save will write. */
export function savePlanText(p: SavePlanInput): string {
  const name = suggestedName(p.kind, p.scanName, p.bitDepth);
  if (p.kind === 'cleaned' || p.kind === 'removed') {
    const what =
      p.kind === 'cleaned'
        ? `the cleaned scan (${p.bitDepth}-bit, lossless)`
        : 'the removed part as an 8-bit PNG (mid-grey = nothing removed; the scale is in the file’s comment)';
    const when = p.cleanedReady
      ? 'with the Clean settings'
      : 'after cleaning with the Clean settings (it runs when you save)';
    return `Will write ${name}: ${what}, ${when}.`;
  }
  const planes = p.tiled ? `tiles of ${p.tile}` : 'whole planes';
  const f =
    p.shown && sameBudget(p.shown.budget, p.budget) && p.shown.tiled === p.tiled ? p.shown : undefined;
  const rank = f?.values.rank;
  const layers = f?.residual
    ? rank === 0
      ? 'a wavelet residual layer alone'
      : `rank ${rank} + a wavelet residual layer`
    : `rank ${rank}`;
  const at = `${budgetText(p.budget)}${p.budget.kind !== 'rank' && rank !== undefined ? ` (${layers})` : ''}, ${planes}`;
  if (p.kind === 'expanded')
    return `Will write ${name}: the image shown, decoded from the file at ${at}, as a lossless ${p.bitDepth === 16 ? 'TIFF' : 'PNG'}.`;
  const bytes = f?.values.bytes;
  const size =
    bytes === undefined
      ? 'size not known until the encoder has run at this budget'
      : f?.exact
        ? `${formatBytes(bytes)} exactly (this budget was encoded)${f.values.psnr !== undefined ? `, PSNR ${formatPsnr(f.values.psnr)}` : ''}`
        : `about ${formatBytes(bytes)} (estimated, within 10 %)`;
  return `Will write ${name}: compressed at ${at}; ${size}.`;
}
