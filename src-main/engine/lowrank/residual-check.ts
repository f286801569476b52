/**
 * The report's proof that the residual layer as written decodes to what the report measures, run beside the
 * report's own decode. Decoding a file this process just wrote rebuilds each residual plane from the
 * quantised coefficients its encode recorded (../codec/coded-planes: the file's bytes are compared with the
 * recorded bytes), which skips the range decoder. This check runs the range decoder on those bytes and
 * compares the coefficients and reconstruction offsets it recovers with the recorded ones, value for value.
 * Together: the bytes in the file decode to the coefficients the reported samples were rebuilt from.
 *
 * Where the recorded coefficients are resident in their plane's own memory (../codec/resident-plane), the
 * bytes are range-decoded there, into the q region (the recorded values kept as their non-zeros first), on
 * the calling thread: memory the encode already touched, so no fresh pages. With `offThread` (a caller with a
 * second thread), a 'residual-verify' job decodes them there instead, and compares them with the recorded
 * non-zeros (listed from the q region, which stays the plane's), while this thread rebuilds the plane: the
 * check leaves the critical path. Where it decodes: with 'lend' (the encode is decided, so nothing reads the
 * plane's transform coefficients again, and the rebuild goes over them), in q's region and the coder's map
 * once the rebuild has read q, memory the encode touched; otherwise in that thread's coder memory (fresh pages the first time, about 5
 * bytes per pixel, kept for the next check). Otherwise (a plane coded on the other thread, a small plane, no
 * WebAssembly) a 'residual-decode' job of ./side-jobs decodes them on the second thread when there is one.
 */

import { recallCode } from '../codec/coded-planes';
import { bandTable } from '../codec/coeff-coder';
import { decodeResidentV2 } from '../codec/coeff-coder-resident';
import {
  keepNonZeros,
  lendAfterRebuild,
  releaseForRedecode,
  residentQ,
  residentQView,
} from '../codec/resident-plane';
import type { LentRegion } from '../codec/wasm/coder-runtime';
import type { CodedCoefficients } from '../codec/wavelet-plane';
import { bandsFor, levelsFor } from '../codec/wavelet-transform';
import { sameAsKept, sameInt32, sameOffsets } from './residual-verify';
import type { SideJobs, SideRunner } from './side-jobs';

/** Coefficient coder of the residual layer this encoder writes (container 1.3, ../codec/wavelet-plane). */
const WRITTEN_CODER = 2;

/**
 * Which planes a call checks: 'all'; 'elsewhere' only those not resident (their side jobs start at once, so
 * the other thread decodes while this one works), leaving the resident ones to a later call with 'resident',
 * which checks only those (for the file that is kept).
 */
export type CheckedPlanes = 'all' | 'elsewhere' | 'resident';

/**
 * Where a resident plane is checked: false, here; true, on the other thread in its coder's memory; 'lend', by
 * the runner (on the other thread, or here with one that computes at once) in the plane's q region once its
 * rebuild has read it (only once the encode is decided: the rebuild overwrites the plane's coefficients, and
 * reading them afterwards throws).
 */
export type CheckThread = boolean | 'lend';

/** Recorded encodes a call with 'elsewhere' left to a call with 'resident'. */
const deferred = new WeakSet<CodedCoefficients>();

/**
 * Start the check of every residual plane whose encode was recorded (a plane that was not is range-decoded
 * by the report's decode itself). Call before that decode, which rebuilds a resident plane over its q region
 * (it forgets nothing, but the caller clears the records afterwards): resident planes are checked at once,
 * the others' jobs started (with `offThread`, the resident ones' too). The returned function waits for the
 * jobs and throws an Error naming `file` when a plane's bytes do not decode to its recorded coefficients.
 */
export function startResidualCheck(
  run: SideRunner,
  residual: { steps: number[]; bytes: Uint8Array[] } | undefined,
  width: number,
  height: number,
  file: string,
  planes: CheckedPlanes = 'all',
  offThread: CheckThread = false,
): () => void {
  let failed: Error | undefined;
  const jobs = (residual?.bytes ?? []).flatMap((bytes, k) => {
    const coded = recallCode(bytes, width, height, residual?.steps[k] ?? 0, WRITTEN_CODER);
    if (!coded) return [];
    if (planes === 'elsewhere' && residentQ(coded)) {
      deferred.add(coded);
      return [];
    }
    if (planes === 'resident' && !deferred.delete(coded)) return [];
    if (planes !== 'elsewhere') {
      const job = offThread ? verifyElsewhere(run, coded, width, height, offThread === 'lend') : undefined;
      if (job) return [{ k, ...job }];
      const here = checkResident(coded, width, height);
      if (here !== undefined) {
        if (here !== 'same' && !failed) failed = mismatch(file, k, here);
        return [];
      }
    }
    const into = spareBuffer(width * height);
    const join = started(run, 'residual-decode', { bytes: coded.bytes, width, height, into });
    return [{ k, into, differs: () => firstDifference(join(), coded) }];
  });
  return () => {
    for (const { k, differs } of jobs) {
      let what: string | undefined;
      try {
        what = differs();
      } catch (err) {
        throw mismatch(file, k, `cannot be range-decoded (${(err as Error).message})`);
      }
      if (what) throw mismatch(file, k, what);
    }
    if (failed) throw failed;
    // Every job answered and was compared: nothing writes or reads these buffers any more, so the next check
    // may decode into them (after a failure they are dropped: a job that gave no answer might still write).
    for (const { into } of jobs) if (into) spare.push(into);
  };
}

/**
 * The check of a resident plane on the other thread ('residual-verify', ./residual-verify): its recorded
 * values listed as their non-zeros (../codec/resident-plane keepNonZeros; the q region stays the plane's, for
 * the rebuild). With `lend` (the encode is decided), the plane's rebuild goes over its coefficients and the
 * job starts once that has read q (or when joined, if no rebuild came first), its bytes decoded in q's region
 * and the coder's map (the arena lends them until the answer comes; ../codec/wasm/arena); else it starts now,
 * decoding in the other thread's coder memory, so this thread may rebuild over the q region meanwhile.
 * Undefined when the plane is not resident.
 */
function verifyElsewhere(
  run: SideRunner,
  coded: CodedCoefficients,
  width: number,
  height: number,
  lend: boolean,
): { into?: Int32Array; differs: () => string | undefined } | undefined {
  const kept = keepNonZeros(coded);
  if (!kept) return undefined;
  const { arena, ...values } = kept;
  const args = { bytes: coded.bytes, width, height, kept: values, offsets: coded.offsets };
  if (!lend) {
    const join = started(run, 'residual-verify', args);
    return { differs: () => join() || undefined };
  }
  // Started once the report's rebuild (over the coefficients) has read q, in q's region and the coder's map.
  let join: (() => string) | undefined;
  let lent: LentRegion | undefined;
  const now = lendAfterRebuild(
    arena,
    bandTable(bandsFor(width, height, levelsFor(width, height))),
    (region) => {
      lent = region;
      join = started(run, 'residual-verify', { ...args, region });
    },
  );
  return {
    differs: () => {
      now();
      const what = (join as () => string)();
      // Answered: nothing writes the region any more (without an answer it stays lent, so it is never reused).
      if (lent) arena.endLoan();
      return what || undefined;
    },
  };
}

/**
 * The check of a plane whose recorded q is resident: its bytes range-decoded into the arena's q region (the
 * recorded values kept first, ../codec/resident-plane releaseForRedecode) and compared with them: 'same', or
 * what differs ('…cannot be range-decoded…', 'decodes to other …'); undefined when the plane is not resident
 * (or the coder port cannot run there), for the side job to check.
 */
function checkResident(coded: CodedCoefficients, width: number, height: number): string | undefined {
  const kept = releaseForRedecode(coded);
  if (!kept) return undefined;
  const { arena } = kept;
  let got: { offsets: Float64Array; counts: Int32Array } | null;
  try {
    got = decodeResidentV2(arena, coded.bytes, bandsFor(width, height, levelsFor(width, height)));
  } catch (err) {
    return `cannot be range-decoded (${(err as Error).message})`;
  }
  // No port here: the recorded values are kept (loaded back when next needed), and the side job checks.
  if (!got) return undefined;
  const q = arena.qView();
  let decoded = 0;
  for (let j = 0; j < got.counts.length; j++) decoded += got.counts[j];
  const differs = !sameAsKept(q, decoded, kept)
    ? 'coefficients'
    : !sameOffsets(got.offsets, coded.offsets)
      ? 'reconstruction offsets'
      : undefined;
  return differs ? `decodes to other ${differs} than it was coded from` : 'same';
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

/** A job started; a runner that computes at once (../side-jobs runHere) throws when joined instead. */
function started<K extends 'residual-decode' | 'residual-verify'>(
  run: SideRunner,
  name: K,
  args: SideJobs[K]['args'],
): () => SideJobs[K]['result'] {
  try {
    return run(name, args);
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

/** How two coefficient sets differ ('decodes to other coefficients …'), or undefined when they are equal. */
function firstDifference(
  a: { q: Int32Array; offsets: Float64Array },
  b: { q: Int32Array; offsets?: Float64Array },
): string | undefined {
  // The encoder's q where it lies (its arena), not the copy its `q` getter would make.
  const q = residentQView(b) ?? b.q;
  const what =
    a.q.length !== q.length || !sameInt32(a.q, q)
      ? 'coefficients'
      : sameOffsets(a.offsets, b.offsets)
        ? undefined
        : 'reconstruction offsets';
  return what && `decodes to other ${what} than it was coded from`;
}
