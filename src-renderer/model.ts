/**
 * The page's low-rank model of the open scan: σ, U, V of each plane (received once) and a running
 * reconstruction A_k = Σ_{i<k} σ_i u_i v_iᵀ per plane, moved one rank-one layer at a time so a slider
 * step costs one pass over the plane (m·n multiply-adds), never a new factorisation.
 *
 * The instant figures come from the spectrum alone (Eckart–Young–Mirsky: ‖A − A_k‖_F² = Σ_{i>k} σ_i²,
 * ‖A − A_k‖₂ = σ_{k+1}); the exact figures for a rank come from the encoder on the back end.
 */
import { decodeFactorSet, type FactorSetHeader } from '../src-main/contract';
import { psnrFromFrobenius } from '../src-main/engine/metrics';

export interface Plane {
  sigma: Float32Array;
  /** k×height: u_i contiguous. */
  u: Float32Array;
  /** k×width: v_i contiguous. */
  v: Float32Array;
  src: Uint8Array | Uint16Array;
  energy: number;
  /** Σ_{j<i} σ_j², length k+1. */
  cum: Float64Array;
  acc: Float32Array;
}

/** Layers applied before the accumulator is rebuilt from zero, bounding float32 round-off drift. */
const REBUILD_AFTER_LAYERS = 400;

export class LowRankModel {
  readonly header: FactorSetHeader;
  readonly planes: Plane[];
  readonly width: number;
  readonly height: number;
  readonly maxRank: number;
  /** Rank currently held in the accumulators. */
  applied = 0;
  target = 0;
  private drift = 0;

  constructor(buf: ArrayBuffer) {
    const { header, arrays } = decodeFactorSet(buf);
    this.header = header;
    this.width = header.width;
    this.height = header.height;
    this.planes = header.channels.map((_, p) => {
      const sigma = arrays[`sigma.${p}`] as Float32Array;
      const cum = new Float64Array(sigma.length + 1);
      for (let i = 0; i < sigma.length; i++) cum[i + 1] = cum[i] + sigma[i] * sigma[i];
      return {
        sigma,
        u: arrays[`u.${p}`] as Float32Array,
        v: arrays[`v.${p}`] as Float32Array,
        src: arrays[`src.${p}`] as Uint8Array | Uint16Array,
        energy: header.energy[p],
        cum,
        acc: new Float32Array(this.width * this.height),
      };
    });
    this.maxRank = Math.min(...header.ranks);
  }

  get peak(): number {
    return this.header.peak;
  }

  private brightest?: number;
  /**
   * White point for display: the brightest source sample (16-bit scans often use a fraction of 0–65535),
   * at least 1. Figures always use {@link peak}, the nominal scale.
   */
  get displayPeak(): number {
    if (this.brightest === undefined) {
      let mx = 1;
      for (const p of this.planes) for (let i = 0; i < p.src.length; i++) if (p.src[i] > mx) mx = p.src[i];
      this.brightest = mx;
    }
    return this.brightest;
  }

  /** Add (sign 1) or remove (sign −1) layer i of every plane. */
  private layer(i: number, sign: 1 | -1) {
    const m = this.height;
    const n = this.width;
    for (const p of this.planes) {
      const s = sign * p.sigma[i];
      const uo = i * m;
      const vo = i * n;
      const u = p.u;
      const v = p.v;
      const acc = p.acc;
      for (let r = 0; r < m; r++) {
        const a = s * u[uo + r];
        if (a === 0) continue;
        const ro = r * n;
        for (let c = 0; c < n; c++) acc[ro + c] += a * v[vo + c];
      }
    }
    this.drift++;
  }

  /** Ask for rank k; the work happens in {@link step}. */
  setTarget(k: number) {
    this.target = Math.max(0, Math.min(this.maxRank, Math.round(k)));
    const dist = Math.abs(this.target - this.applied);
    if (dist > this.target || this.drift + dist > REBUILD_AFTER_LAYERS) {
      for (const p of this.planes) p.acc.fill(0);
      this.applied = 0;
      this.drift = 0;
    }
  }

  /** Move towards the target for at most `budgetMs`; returns true once the target is reached. */
  step(budgetMs = 12, now: () => number = () => performance.now()): boolean {
    const t0 = now();
    while (this.applied !== this.target) {
      if (this.applied < this.target) this.layer(this.applied++, 1);
      else this.layer(--this.applied, -1);
      if (now() - t0 > budgetMs) break;
    }
    return this.applied === this.target;
  }

  /** Σ_{i>k} σ_i² summed over planes (exact for k ≤ the stored rank, given ‖A‖_F²). */
  tailEnergy(k: number): number {
    let t = 0;
    for (const p of this.planes) t += Math.max(0, p.energy - p.cum[Math.min(k, p.sigma.length)]);
    return t;
  }

  frobeniusOptimal(k: number): number {
    return Math.sqrt(this.tailEnergy(k));
  }

  spectralBound(k: number): number {
    let b = 0;
    for (const p of this.planes) b = Math.max(b, k < p.sigma.length ? p.sigma[k] : 0);
    return b;
  }

  /** PSNR of the unquantised truncation A_k over all planes. */
  psnrOptimal(k: number): number {
    return psnrFromFrobenius(
      this.frobeniusOptimal(k),
      this.width * this.height * this.planes.length,
      this.peak,
    );
  }

  /** Cumulative energy fraction Σ_{i≤k} σ_i² / ‖A‖_F² of the first plane set. */
  energyFraction(k: number): number {
    let num = 0;
    let den = 0;
    for (const p of this.planes) {
      num += p.cum[Math.min(k, p.sigma.length)];
      den += p.energy;
    }
    return den > 0 ? num / den : 1;
  }

  /** Smallest rank whose truncation reaches `db` PSNR, or undefined if none within the stored rank. */
  rankForPsnr(db: number): number | undefined {
    for (let k = 1; k <= this.maxRank; k++) if (this.psnrOptimal(k) >= db) return k;
    return undefined;
  }
}
