// A seeded test plane for the report's checks (test/lowrank): noise around a diagonal ramp crossed by a bright
// square, rounded and clamped to 0–max (so clamping is exercised).
import { Rng } from '../../src-main/engine/linalg/random';

export function field(w: number, h: number, seed: number, max: number): Float32Array {
  const rng = new Rng(seed);
  return Float32Array.from({ length: w * h }, (_, i) => {
    const [x, y] = [i % w, Math.floor(i / w)];
    const square = Math.abs(x - w / 2) < w / 5 && Math.abs(y - h / 2) < h / 5 ? 0.5 : 0;
    const v = max * ((x + y) / (w + h) + square) + (max / 40) * rng.normal();
    return Math.max(0, Math.min(max, Math.round(v)));
  });
}
