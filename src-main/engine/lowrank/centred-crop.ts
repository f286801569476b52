/**
 * The centred crop on which `--tile auto` picks a tile side for a large scan (./encode), and from which the
 * large-scan encoder takes its tile side and step (./tiled).
 */
import type { DecodedImage } from '../../contract';

/** Above this many pixels, `--tile auto` chooses the tile size on a centred crop of about this size. */
export const AUTO_PROBE_PIXELS = 1 << 20;

/** A centred crop of about AUTO_PROBE_PIXELS as float planes, for the probe encode; its ICC profile is left out. */
export function centredCrop(
  img: Omit<DecodedImage, 'planes'> & { planes: Array<Float32Array | Uint8Array | Uint16Array> },
): DecodedImage {
  const { width, height } = img;
  const side = Math.sqrt(AUTO_PROBE_PIXELS);
  const cw = Math.min(width, Math.round(side * Math.sqrt(width / height)));
  const ch = Math.min(height, Math.round(AUTO_PROBE_PIXELS / cw));
  const x0 = Math.floor((width - cw) / 2);
  const y0 = Math.floor((height - ch) / 2);
  const planes = img.planes.map((p) => {
    const out = new Float32Array(cw * ch);
    for (let y = 0; y < ch; y++)
      out.set(p.subarray((y0 + y) * width + x0, (y0 + y) * width + x0 + cw), y * cw);
    return out;
  });
  return {
    ...img,
    width: cw,
    height: ch,
    planes,
    rawBytes: (img.rawBytes * cw * ch) / (width * height),
    meta: { ...img.meta, icc: undefined },
  };
}
