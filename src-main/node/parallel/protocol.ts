/**
 * Shared control block between the calling thread and the linalg workers (src-main/node/workers/linalg.ts).
 * One slot per worker: the caller writes the product's parameters, resets the shared row counter
 * (the word after the last slot), bumps `seq` and notifies; every thread, the caller included, then
 * claims blocks of `chunk` rows of C with Atomics.add on the counter until all are taken (so a
 * thread that starts late or is slowed by other processes simply takes fewer blocks). Each worker
 * stores `seq` into `done` (and a status) and notifies back.
 */
/** Int32 words per slot in the control array: [seq, done, status, claim]. */
export const CTRL_WORDS = 4;
export const SEQ = 0;
export const DONE = 1;
export const STATUS = 2;
/**
 * Offer word: the caller stores `seq` when it posts a product; a waking worker takes it with
 * compareExchange(seq → −seq) before reading the parameters; a caller that has finished every row
 * block withdraws an untaken offer with compareExchange(seq → 0) and need not wait for that worker.
 */
export const CLAIM = 3;
/** Index in the control Int32Array of the shared next-row counter, for `workers` worker slots. */
export const nextRowWord = (workers: number) => workers * CTRL_WORDS;
/** `seq` value that tells a worker to leave its loop. */
export const SHUTDOWN = -1;
/** Worker status after a job: 0 ok, 1 the kernel threw. */
export const STATUS_OK = 0;
export const STATUS_ERROR = 1;

/** Float64 words per slot in the parameter array. */
export const PARAM_WORDS = 16;
/** Parameter layout (Float64Array, per slot). */
const P = {
  kind: 0,
  m: 1,
  n: 2,
  k: 3,
  a: 4,
  rsA: 5,
  csA: 6,
  b: 7,
  ldb: 8,
  c: 9,
  ldc: 10,
  acc: 11,
  /** Rows per claimed block (a multiple of 4, the kernels' register block). */
  chunk: 12,
} as const;
/** `kind` values. */
export const KIND_F32 = 0;
export const KIND_F64 = 1;

/** One product's parameters (pointers are byte offsets into the shared memory), in the layout {@link P}. */
export type GemmJob = { -readonly [K in keyof typeof P]: number };
const FIELDS = Object.keys(P) as (keyof typeof P)[];

/** The caller posts a product to one worker slot. */
export function writeJob(params: Float64Array, slot: number, job: GemmJob): void {
  const q = slot * PARAM_WORDS;
  for (const f of FIELDS) params[q + P[f]] = job[f];
}

/** A worker reads the product posted to its slot. */
export function readJob(params: Float64Array, slot: number): GemmJob {
  const q = slot * PARAM_WORDS;
  const job = {} as GemmJob;
  for (const f of FIELDS) job[f] = params[q + P[f]];
  return job;
}

export interface LinalgWorkerData {
  memory: WebAssembly.Memory;
  ctrl: SharedArrayBuffer;
  params: SharedArrayBuffer;
  slot: number;
}
