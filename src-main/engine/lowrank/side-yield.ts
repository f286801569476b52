/**
 * A long side job's way to let the calling thread's short pieces through: the scan encoder's side thread
 * (src-main/node/workers/side.ts) sets a function that runs, at once, the pieces of the calling thread's
 * passes offered since (../codec/arena-split: its transforms and quantiser, cut so both threads share them),
 * and the crop's base estimate (./base-estimate, ~0.3 s of that thread while the calling thread transforms
 * and quantises the whole planes) calls {@link letPiecesThrough} between tiles. The calling thread is the
 * critical path; the estimate is joined only after the residual is fitted (./residual-first), so it can
 * wait. On the calling thread, or where nothing is set, it does nothing. Jobs are plain functions of their
 * arguments, so nothing computed changes, only which thread computes which piece when.
 */

let hook: () => void = () => {};

/** Run the pieces the calling thread has offered the side thread since, if any (none elsewhere). */
export function letPiecesThrough(): void {
  hook();
}

/** Set what {@link letPiecesThrough} runs (the side thread, once). */
export function setLetPiecesThrough(fn: () => void): void {
  hook = fn;
}
