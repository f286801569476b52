/**
 * The report's proof that the residual layer as written decodes to what the report measures, run beside the
 * report's own decode. Decoding a file this process just wrote rebuilds each residual plane from the
 * quantised coefficients its encode recorded (../codec/coded-planes: the file's bytes are compared with the
 * recorded bytes), which skips the range decoder. This check runs the range decoder on those bytes, on the
 * second thread when there is one (a 'residual-decode' job of ./side-jobs), and compares the coefficients
 * and reconstruction offsets it recovers with the recorded ones, value for value. Together: the bytes in the
 * file decode to the coefficients the reported samples were rebuilt from.
 */
import { recallCode } from '../codec/coded-planes';
import { residentQView } from '../codec/resident-plane';
import type { SideRunner } from './side-jobs';

/** Coefficient coder of the residual layer this encoder writes (container 1.3, ../codec/wavelet-plane). */
const WRITTEN_CODER = 2;

/**
 * Start the check of every residual plane whose encode was recorded (a plane that was not is range-decoded
 * by the report's decode itself). Call before that decode (it forgets nothing, but the caller clears the
 * records afterwards); the returned function waits for the checks and throws an Error naming `file` when a
 * plane's bytes do not decode to its recorded coefficients.
 */
export function startResidualCheck(
  run: SideRunner,
  residual: { steps: number[]; bytes: Uint8Array[] } | undefined,
  width: number,
  height: number,
  file: string,
): () => void {
  const jobs = (residual?.bytes ?? []).flatMap((bytes, k) => {
    const coded = recallCode(bytes, width, height, residual?.steps[k] ?? 0, WRITTEN_CODER);
    if (!coded) return [];
    const into = spareBuffer(width * height);
    return [{ k, coded, into, join: started(run, coded.bytes, width, height, into) }];
  });
  return () => {
    for (const { k, coded, join } of jobs) {
      let got: { q: Int32Array; offsets: Float64Array };
      try {
        got = join();
      } catch (err) {
        throw mismatch(file, k, `cannot be range-decoded (${(err as Error).message})`);
      }
      const at = firstDifference(got, coded);
      if (at !== undefined) throw mismatch(file, k, `decodes to other ${at} than it was coded from`);
    }
    // Every job answered and was compared: nothing writes or reads these buffers any more, so the next check
    // may decode into them (after a failure they are dropped: a job that gave no answer might still write).
    for (const { into } of jobs) if (into) spare.push(into);
  };
}

/**
 * Coefficient buffers of joined checks, on SharedArrayBuffers, reused by the next check of a plane of the same
 * size (a budget search checks every file it builds): fresh 4-byte-per-pixel pages are not touched again.
 */
const spare: Int32Array[] = [];

/** A spare buffer of n values taken from the pool, or undefined (the job then allocates its own). */
function spareBuffer(n: number): Int32Array | undefined {
  const i = spare.findIndex((b) => b.length === n);
  if (i < 0) {
    spare.length = 0;
    return typeof SharedArrayBuffer === 'function'
      ? new Int32Array(new SharedArrayBuffer(n * Int32Array.BYTES_PER_ELEMENT))
      : undefined;
  }
  return spare.splice(i, 1)[0];
}

/** The decode job, started; a runner that computes at once (../side-jobs runHere) throws when joined instead. */
function started(run: SideRunner, bytes: Uint8Array, width: number, height: number, into?: Int32Array) {
  try {
    return run('residual-decode', { bytes, width, height, into });
  } catch (err) {
    return (): never => {
      throw err;
    };
  }
}

function mismatch(file: string, k: number, what: string): Error {
  return new Error(
    `${file}: the residual layer just coded for plane ${k} ${what}, so no file is written; please report this`,
  );
}

/** Where two coefficient sets differ ('coefficients' or 'reconstruction offsets'), or undefined when equal. */
function firstDifference(
  a: { q: Int32Array; offsets: Float64Array },
  b: { q: Int32Array; offsets?: Float64Array },
): string | undefined {
  // The encoder's q where it lies (its arena), not the copy its `q` getter would make.
  const q = residentQView(b) ?? b.q;
  if (a.q.length !== q.length || !sameInt32(a.q, q)) return 'coefficients';
  const o = b.offsets;
  if (!o || o.length !== a.offsets.length) return 'reconstruction offsets';
  for (let i = 0; i < o.length; i++) if (!Object.is(o[i], a.offsets[i])) return 'reconstruction offsets';
  return undefined;
}

function sameInt32(a: Int32Array, b: Int32Array): boolean {
  for (let i = 0; i < a.length; i++) if (a[i] !== b[i]) return false;
  return true;
}
