/** The cleaning service as the app calls it. Wired to src-main/node/services/clean.ts when it lands. */
import { type CleanSettings, type DecodedImage, RankfoldError } from '../../contract';
import type { ProgressFn } from './factor';

export async function cleanWithService(
  _image: DecodedImage,
  _settings: CleanSettings,
  _progress: ProgressFn,
): Promise<{ cleaned: Float32Array[]; report: Record<string, unknown> }> {
  throw new RankfoldError('This build has no cleaning service yet.');
}
