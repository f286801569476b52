/**
 * A decoded scan as the whole-scan encoder (./encode) takes it: float planes (the contract's DecodedImage), or
 * the decoder's integer samples themselves (8-bit or 16-bit, on shared memory; ../../node/image/integer-samples),
 * which hold the same values. The residual-only shortcut (./residual-first) and the file's measuring
 * (./scan-finish) read those as they are: an 8-megapixel grey scan then never fills a 33 MB float plane of fresh
 * pages (about 8 000 page faults, issue #12). Every other path widens them to float planes first
 * ({@link floatScan}), so it computes exactly what it did on the decoder's float planes.
 */
import type { DecodedImage, ExactF32Samples } from '../../contract';
import { sharedFloat32 } from './decode-image';

/** One plane per channel: float, or the decoder's integers (8-bit in Uint8Array, 16-bit in Uint16Array). */
export type ScanImage = Omit<DecodedImage, 'planes'> & { planes: ExactF32Samples[] };

/** `img` with float planes: itself when its planes are float already, else with shared float copies. */
export function floatScan(img: ScanImage): DecodedImage {
  if (img.planes.every((p) => p instanceof Float32Array)) return img as DecodedImage;
  const planes = img.planes.map((p) => {
    if (p instanceof Float32Array) return p;
    const f = sharedFloat32(p.length);
    f.set(p);
    return f;
  });
  return { ...img, planes };
}
