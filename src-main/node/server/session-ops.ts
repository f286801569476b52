/**
 * The jobs one scan session runs, inside its worker thread (src-main/node/workers/scan-session.ts).
 * Each op calls the same services the CLI calls, so the page's figures equal `rankfold compress --json`.
 */
import { type DecodedImage, RankfoldError, type ScanSummary } from '../../contract';
import { decodeImage } from '../image/decode';
import { factorScan, type ProgressFn, readyEngine } from './factor';
import { sessionServices, startSideThread } from './services-bridge';
import { trace, tracing } from './trace';

export type SessionOp = 'warm' | 'open' | 'adopt' | 'factors' | 'evaluate' | 'clean' | 'save';

export interface OpResult {
  value: unknown;
  transfer?: ArrayBuffer[];
}

export async function runSessionOp(
  state: { image?: DecodedImage },
  op: SessionOp,
  args: Record<string, unknown>,
  progress: ProgressFn,
): Promise<OpResult> {
  if (!tracing) return runOp(state, op, args, progress);
  const t0 = performance.now();
  const ms = () => `${(performance.now() - t0).toFixed(0)} ms`;
  let stage = '';
  trace(`op ${op} start`);
  const traced: ProgressFn = (done, total, s) => {
    if (s !== stage) trace(`op ${op} stage ${s} at ${ms()}`);
    stage = s;
    progress(done, total, s);
  };
  const r = await runOp(state, op, args, traced);
  trace(`op ${op} done ${ms()}`);
  return r;
}

async function runOp(
  state: { image?: DecodedImage },
  op: SessionOp,
  args: Record<string, unknown>,
  progress: ProgressFn,
): Promise<OpResult> {
  if (op === 'warm') {
    // A spare thread (./spare-threads.ts): the engine ready and, for foreground work, the side thread started.
    await readyEngine();
    if (args.side) startSideThread();
    return { value: undefined };
  }
  if (op === 'open') {
    progress(0, 1, 'decoding');
    const image = sharedImage(
      await decodeImage(args.file as string, { page: args.page as number | undefined }),
    );
    state.image = image;
    progress(1, 1, 'decoded');
    // The planes live in shared memory: the session's other threads adopt them without decoding again.
    return { value: { summary: summaryOf(image), image } };
  }
  if (op === 'adopt') {
    state.image = args.image as DecodedImage;
    return { value: summaryOf(state.image) };
  }
  const image = state.image;
  if (!image) throw new RankfoldError('No scan is open in this session; open it again.');
  if (op === 'factors') {
    // First word before the kernels and thread pool are ready (a fresh thread warms them up: ~0.1–1 s).
    progress(0, image.planes.length, 'preparing the factorisation');
    await readyEngine();
    const bytes = factorScan(image, args.maxRank as number, progress, args.powerIters as number | undefined);
    const buf = bytes.buffer as ArrayBuffer;
    return { value: buf, transfer: [buf] };
  }
  const services = await sessionServices();
  if (op === 'evaluate') {
    const r = await services.evaluate(image, args, progress);
    return { value: r, transfer: r.preview ? [r.preview] : [] };
  }
  if (op === 'clean') {
    const r = await services.clean(image, args, progress);
    return { value: r, transfer: r.images ? [r.images] : [] };
  }
  if (op === 'save') {
    const r = await services.save(image, args, progress);
    return { value: r, transfer: r.data ? [r.data] : [] };
  }
  throw new RankfoldError(`Unknown session job ${String(op)}`);
}

function summaryOf(image: DecodedImage): Omit<ScanSummary, 'scanId' | 'name'> {
  return {
    width: image.width,
    height: image.height,
    channels: image.channels,
    bitDepth: image.bitDepth,
    colour: image.colour,
    inputBytes: image.inputBytes,
    rawBytes: image.rawBytes,
    format: image.meta.format,
  };
}

/**
 * The decoded scan with its planes moved to SharedArrayBuffers, so a replacement thread (after a cancel)
 * and the background factorisation read the same samples without decoding the file again. No session job
 * writes into a scan's planes (test/server/shared-planes.test.ts checks every job).
 */
export function sharedImage(image: DecodedImage): DecodedImage {
  const planes = image.planes.map((p) => {
    const s = new Float32Array(new SharedArrayBuffer(p.byteLength));
    s.set(p);
    return s;
  });
  return { ...image, planes };
}
