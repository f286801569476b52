/**
 * Coding a colour scan's residual planes on two threads (./residual-first): the calling thread codes Y while
 * a second thread codes the chroma planes, each one a 'code-plane' job of ./side-jobs. Each plane is coded
 * by the same function on the same coefficients whichever thread runs it, so the bytes do not depend on the
 * thread (test/codec/workers-identical.test.ts).
 *
 * Balance: the jobs are offered Cb first, Cr last; once Y is coded, this thread joins them last to first,
 * so a job the other thread has not started yet (still busy with Cb) is taken back and coded here.
 */
import { recallCode, rememberCode } from '../codec/coded-planes';
import { type AnalysedPlane, type CodedCoefficients, codeAnalysed } from '../codec/wavelet-plane';
import { codeHere, type PlanesCoder } from './residual-fit';
import type { SideRunner } from './side-jobs';

/** A copy of `a` whose coefficients and band map live in shared memory, so a job reads them without a copy. */
function shareable(a: AnalysedPlane): AnalysedPlane {
  const coeffs = new Float64Array(new SharedArrayBuffer(a.coeffs.byteLength));
  coeffs.set(a.coeffs);
  const map = new Uint8Array(new SharedArrayBuffer(a.map.byteLength));
  map.set(a.map);
  return { ...a, coeffs, map };
}

/**
 * The analysed planes to code, with every plane after the first moved to shared memory when a second thread
 * codes them (no change otherwise), and the coder to use for them.
 */
export function planesCoder(
  analysed: AnalysedPlane[],
  side: SideRunner | undefined,
): { analysed: AnalysedPlane[]; code: PlanesCoder } {
  if (!side || analysed.length < 2 || typeof SharedArrayBuffer !== 'function')
    return { analysed, code: codeHere };
  const planes = analysed.map((a, k) => (k === 0 ? a : shareable(a)));
  const code: PlanesCoder = (list, steps) => {
    const jobs = list
      .slice(1)
      .map((a, j) => ({ a, step: steps[j + 1], join: side('code-plane', { ...a, step: steps[j + 1] }) }));
    const first = codeAnalysed(list[0], steps[0], 2);
    const rest: CodedCoefficients[] = new Array(jobs.length);
    for (let j = jobs.length - 1; j >= 0; j--) {
      const { a, step, join } = jobs[j];
      const c = join();
      // A plane coded by the other thread is recorded here, as codeAnalysed records the ones coded here
      // (../codec/coded-planes: the report's decode then skips the range decoder for it).
      if (recallCode(c.bytes, a.width, a.height, step, 2) !== c)
        rememberCode({ bytes: c.bytes, width: a.width, height: a.height, step, coder: 2, coded: c });
      rest[j] = c;
    }
    return [first, ...rest];
  };
  return { analysed: planes, code };
}
