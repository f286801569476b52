/** The cleaning service (src-main/node/services/clean.ts) as the app calls it: same code as `rankfold clean`. */
import type { CleanSettings, DecodedImage } from '../../contract';
import { cleanDecoded } from '../services/clean';
import type { ProgressFn } from './factor';

export async function cleanWithService(
  image: DecodedImage,
  settings: CleanSettings,
  progress: ProgressFn,
): Promise<{
  cleaned: Float32Array[];
  removed: Float32Array[];
  report: Record<string, unknown>;
  profile: { rows: Float64Array[] | null; columns: Float64Array[] | null };
}> {
  const r = await cleanDecoded(
    image,
    { noise: settings.noise, banding: settings.banding },
    { onProgress: (stage, fraction) => progress(Math.round(fraction * 100), 100, stage) },
  );
  return {
    cleaned: r.planes,
    removed: r.removed,
    report: r.report as unknown as Record<string, unknown>,
    profile: r.profile,
  };
}
