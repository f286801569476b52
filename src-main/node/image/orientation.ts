/**
 * EXIF orientation as pixel transforms on row-major planes.
 *
 * References
 * - CIPA DC-008 (Exif 2.32), tag 0x0112 Orientation, values 1–8: "1 = the 0th row is the visual top and
 *   the 0th column the visual left-hand side", …, "6 = 0th row is the visual right-hand side, 0th column
 *   the visual top", "8 = 0th row is the visual left-hand side, 0th column the visual bottom".
 * - TIFF 6.0 (Adobe, 1992), tag 274 Orientation: the same eight values.
 *
 * `toUpright` maps stored pixels to the displayed (upright) image, as a viewer that honours the tag does;
 * `toStored` is its inverse, used when a file is written back with its original orientation tag.
 */

export type Orientation = 1 | 2 | 3 | 4 | 5 | 6 | 7 | 8;

/** True for orientations that swap width and height (5–8). */
export function swapsAxes(o: number): boolean {
  return o >= 5 && o <= 8;
}

/** The orientation whose display transform undoes `o`'s: 6 ↔ 8, the others are their own inverse. */
function inverseOrientation(o: Orientation): Orientation {
  return o === 6 ? 8 : o === 8 ? 6 : o;
}

/**
 * Apply the display transform of EXIF orientation `o` to a stored plane of width×height.
 * Returns the upright plane and its size (width and height swap for 5–8).
 */
export function toUpright<T extends Float32Array | Float64Array | Uint8Array | Uint16Array>(
  plane: T,
  width: number,
  height: number,
  o: Orientation,
): { plane: T; width: number; height: number } {
  if (o === 1) return { plane, width, height };
  const out = new (plane.constructor as new (n: number) => T)(plane.length);
  const ow = swapsAxes(o) ? height : width;
  const oh = swapsAxes(o) ? width : height;
  // Each orientation is a choice of mirrors of the stored axes, then a transpose for 5–8.
  const flipX = o === 2 || o === 3 || o === 7 || o === 8;
  const flipY = o === 3 || o === 4 || o === 6 || o === 7;
  const transpose = swapsAxes(o);
  for (let y = 0; y < height; y++)
    for (let x = 0; x < width; x++) {
      const sx = flipX ? width - 1 - x : x;
      const sy = flipY ? height - 1 - y : y;
      const ux = transpose ? sy : sx;
      const uy = transpose ? sx : sy;
      out[uy * ow + ux] = plane[y * width + x];
    }
  return { plane: out, width: ow, height: oh };
}

/** Inverse of {@link toUpright}: the stored layout that a viewer honouring `o` shows as `plane`. */
export function toStored<T extends Float32Array | Float64Array | Uint8Array | Uint16Array>(
  plane: T,
  width: number,
  height: number,
  o: Orientation,
): { plane: T; width: number; height: number } {
  return toUpright(plane, width, height, inverseOrientation(o));
}
