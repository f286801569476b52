/**
 * The side outputs of `clean`: the removed part as a PNG a person can look at, and the subtracted stripe
 * profiles as CSV.
 */
import sharp from 'sharp';
import type { NoiseModelPlane, NoiseModelReport } from '../../contract';
import { crc32 } from '../../engine/codec/crc32';

/** Stripe profiles that were subtracted, per colour channel (null when that axis was not removed). */
export interface StripeProfiles {
  rows: Float64Array[] | null;
  columns: Float64Array[] | null;
}

/**
 * The removed part as an 8-bit PNG: grey = 128 + scale·removed, clipped to 0–255. The scale maps 4× the
 * RMS of the removed part (at least one grey level of the input) to ±127, so noise and stripes are
 * visible; it is stated in the report and in a PNG tEXt chunk (keyword "Comment").
 */
export async function removedPng(removed: Float32Array[], width: number, height: number, bitDepth: 8 | 16) {
  let sq = 0;
  for (const p of removed) for (let i = 0; i < p.length; i++) sq += p[i] * p[i];
  const rms = Math.sqrt(sq / (removed.length * width * height));
  const scale = 127 / Math.max(4 * rms, 1);
  const ch = removed.length;
  const buf = Buffer.alloc(width * height * ch);
  for (let i = 0, o = 0; i < width * height; i++)
    for (let c = 0; c < ch; c++, o++)
      buf[o] = Math.max(0, Math.min(255, Math.round(128 + scale * removed[c][i])));
  const png = await sharp(buf, { raw: { width, height, channels: ch as 1 | 3 } })
    .png()
    .toBuffer();
  const text = `Rankfold removed part: grey = 128 + ${scale.toPrecision(6)} x (input - output), input in ${bitDepth}-bit grey levels; RMS removed ${rms.toPrecision(6)}`;
  return { bytes: insertPngText(png, 'Comment', text), scale };
}

/** Insert a tEXt chunk after IHDR (PNG spec, ISO/IEC 15948:2004 §11.3.4.3). */
function insertPngText(png: Buffer, keyword: string, text: string): Buffer {
  const data = Buffer.from(`${keyword}\0${text}`, 'latin1');
  const chunk = Buffer.alloc(12 + data.length);
  chunk.writeUInt32BE(data.length, 0);
  chunk.write('tEXt', 4, 'latin1');
  data.copy(chunk, 8);
  chunk.writeUInt32BE(crc32(chunk.subarray(4, 8 + data.length)), 8 + data.length);
  const ihdrEnd = 8 + 8 + 13 + 4;
  return Buffer.concat([png.subarray(0, ihdrEnd), chunk, png.subarray(ihdrEnd)]);
}

/**
 * CSV of the subtracted stripe profiles: `axis,index,<channel…>`, offsets in grey levels of the input. When
 * the noise model was fitted or given, rows follow in the same shape: `noise-a,0,…` and `noise-b,0,…` (the
 * model σ²(x) = a·x + b per channel), then per level set k `noise-level,k,…` (mean intensity),
 * `noise-sigma,k,…` (σ measured there), `noise-fit,k,…` (σ of the model there), `noise-count,k,…` (blocks)
 * and `noise-used,k,…` (1 when the fit kept the level set).
 */
export function profileCsv(
  profile: StripeProfiles,
  width: number,
  height: number,
  noise: NoiseModelReport | null = null,
): string {
  const ch = (profile.rows ?? profile.columns)?.length ?? noise?.planes.length ?? 1;
  const names = ch === 3 ? ['R', 'G', 'B'] : ['gray'];
  const lines = [`axis,index,${names.join(',')}`];
  if (profile.rows)
    for (let y = 0; y < height; y++)
      lines.push(`row,${y},${profile.rows.map((p) => p[y].toFixed(4)).join(',')}`);
  if (profile.columns)
    for (let x = 0; x < width; x++)
      lines.push(`column,${x},${profile.columns.map((p) => p[x].toFixed(4)).join(',')}`);
  if (noise) lines.push(...noiseModelRows(noise));
  return `${lines.join('\n')}\n`;
}

/** The noise-model rows of {@link profileCsv}; a channel with fewer level sets leaves its cell empty. */
function noiseModelRows(noise: NoiseModelReport): string[] {
  const ps = noise.planes;
  const out = [`noise-a,0,${ps.map((p) => p.a.toPrecision(6)).join(',')}`];
  out.push(`noise-b,0,${ps.map((p) => p.b.toPrecision(6)).join(',')}`);
  const n = Math.max(0, ...ps.map((p) => p.points.length));
  const row = (
    name: string,
    k: number,
    f: (p: NoiseModelPlane['points'][number], m: NoiseModelPlane) => string,
  ) => `${name},${k},${ps.map((m) => (k < m.points.length ? f(m.points[k], m) : '')).join(',')}`;
  for (let k = 0; k < n; k++) {
    out.push(row('noise-level', k, (p) => p.level.toFixed(4)));
    out.push(row('noise-sigma', k, (p) => p.sigma.toFixed(4)));
    out.push(row('noise-fit', k, (p, m) => Math.sqrt(Math.max(0, m.a * p.level + m.b)).toFixed(4)));
    out.push(row('noise-count', k, (p) => String(p.count)));
    out.push(row('noise-used', k, (p) => (p.used ? '1' : '0')));
  }
  return out;
}
