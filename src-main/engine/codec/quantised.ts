/** The quantised form of a plane's factors, shared by the quantiser, the entropy coders and the decoder. */

/** One tile: its mean (in mean steps) and, per kept component i, the quantised σ-weighted vectors. */
export interface QuantTile {
  /** Tile mean in units of the plane's `meanStep`. 0 when mean removal is off. */
  meanQ: number;
  /** Left vectors σᵢ·uᵢ / step, rounded with a dead zone; each of the tile's height. */
  u: Int32Array[];
  /** Right vectors σᵢ·vᵢ / step; each of the tile's width. */
  v: Int32Array[];
}

export interface QuantPlane {
  width: number;
  height: number;
  /** Tile side in pixels; 0 = the whole plane is one tile. */
  tile: number;
  /** Quantiser step Δ on the σ-weighted factors, in grey levels of the plane. */
  step: number;
  /** Step of the tile means; 0 when the means are not removed. */
  meanStep: number;
  tiles: QuantTile[];
}

export interface TileRect {
  x: number;
  y: number;
  w: number;
  h: number;
}

/** The tile grid of a plane: raster order, edge tiles take the remainder. */
export function tileGrid(width: number, height: number, tile: number): TileRect[] {
  const t = tile > 0 ? tile : Math.max(width, height);
  const out: TileRect[] = [];
  for (let y = 0; y < height; y += t)
    for (let x = 0; x < width; x += t)
      out.push({ x, y, w: Math.min(t, width - x), h: Math.min(t, height - y) });
  return out;
}
