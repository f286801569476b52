/**
 * The squared errors of a decoded grey plane against its source, added band by band as the decoder writes the
 * bands (./decode-image decodeImageFileBands; the report's figures, ./decoded-figures): one difference per
 * sample feeds both sums the report uses, in the orders the whole-plane functions add them, so the values are
 * the same bit for bit without a decoded plane. Where the decoder's residual plane is resident in its arena,
 * the decode and these sums are one kernel pass (../codec/resident-rows), with the same operations in the
 * same order.
 */
import type { ExactF32Samples } from '../../contract';
import { greyFlatResident, type SquareSums } from '../codec/resident-rows';

/** ../metrics SseStream's block of samples: the PSNR's squared errors are summed per block, then over blocks. */
const SSE_BLOCK = 4096;

/**
 * Both sums of squared errors, from one difference per sample: `running`, one running sum in sample order (the
 * Frobenius error's square, as squaredError in ./scan-finish), and the PSNR's, summed per block of SSE_BLOCK
 * samples counted from the plane's start and then over blocks, as ../metrics SseStream (and so sse) adds them;
 * plus whether every decoded sample equals the source's.
 */
export class SquaredErrors implements SquareSums {
  running = 0;
  same = true;
  sum = 0;
  block = 0;
  inBlock = 0;

  constructor(readonly source: ExactF32Samples) {}

  /** Add the decoded samples b[0 … len − 1], which are the source's from `at`. */
  add(b: Float32Array, at: number, len: number): void {
    const source = this.source;
    let running = this.running;
    let differs = 0;
    for (let i = 0; i < len; ) {
      const take = Math.min(len - i, SSE_BLOCK - this.inBlock);
      let block = this.block;
      for (let k = i; k < i + take; k++) {
        const d = source[at + k] - b[k];
        const dd = d * d;
        block += dd;
        running += dd;
        differs += dd;
      }
      i += take;
      this.inBlock += take;
      if (this.inBlock === SSE_BLOCK) {
        this.sum += block;
        this.block = 0;
        this.inBlock = 0;
      } else this.block = block;
    }
    this.running = running;
    if (differs !== 0) this.same = false;
  }

  /**
   * out[outAt + i] = clamp(round(base + x[at + i])) to 0 … max, i < len (./decode-image's grey residual-only
   * band), with their squared errors added, in one kernel pass when `x` is resident (../codec/resident-rows);
   * false, with nothing done, when it is not.
   */
  addFlatResident(
    x: Float64Array,
    base: number,
    at: number,
    len: number,
    max: number,
    out: Float32Array,
    outAt: number,
  ): boolean {
    return greyFlatResident(x, base, at, len, max, this.source, this, SSE_BLOCK, out, outAt);
  }

  /** The PSNR's sum: the full blocks' sums, plus the partial last block's. */
  blocked(): number {
    return this.inBlock > 0 ? this.sum + this.block : this.sum;
  }
}
