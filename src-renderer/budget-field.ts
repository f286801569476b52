/**
 * The budget text fields (the Budget card and the Batch panel). No DOM.
 */
import { type Budget, parseBudgetText } from '../src-main/contract';

/**
 * Budget text: sizes and % (as the CLI's --budget), `0.5 bpp`, `38 dB` (PSNR floor) or `rank 40`.
 * @throws the contract's UsageError for text that is none of these (sizes and % are checked there).
 * @example parseBudgetField('38 dB') // { kind: 'psnr', db: 38 }
 */
export function parseBudgetField(text: string): Budget {
  const t = text.trim();
  const rank = /^rank\s*(\d+)$/i.exec(t);
  if (rank) return { kind: 'rank', rank: Number(rank[1]) };
  const bpp = /^(\d+(?:\.\d+)?)\s*bpp$/i.exec(t);
  if (bpp) return { kind: 'bpp', bpp: Number(bpp[1]) };
  const db = /^(\d+(?:\.\d+)?)\s*db$/i.exec(t);
  if (db) return { kind: 'psnr', db: Number(db[1]) };
  return parseBudgetText(t);
}
