/**
 * The back end's jobs on an open scan (evaluate at a budget, clean, save), run in the scan's session
 * worker (./session-worker.ts); large results are kept as blobs for the page to fetch (./backend.ts).
 *
 * A new evaluation of a scan supersedes the one still running or queued for it: that one is cancelled
 * (it rejects with CancelledError), so the figures of the budget the user typed last are never kept
 * waiting behind a budget they have already replaced.
 */
import { extname } from 'node:path';
import type {
  CleanRequest,
  CleanResult,
  EvaluateRequest,
  EvaluateResult,
  SaveRequest,
  SaveResult,
} from '../../contract';
import type { SessionProgress, SessionWorker } from './session-worker';

/** What a job needs from the back end: the scan's session, its file, progress and the blob store. */
export interface ScanJobHost {
  session: SessionWorker;
  file: string;
  progress(job: string): (p: SessionProgress) => void;
  /** Keep bytes for the page to fetch; returns their id. */
  keep(b: { data: ArrayBuffer; fileName: string; type: string }): string;
}

/** The evaluation running or queued per scan id. */
const evaluating = new Map<string, string>();

export async function evaluateJob(host: ScanJobHost, req: EvaluateRequest): Promise<EvaluateResult> {
  const before = evaluating.get(req.scanId);
  if (before !== undefined) host.session.cancel(before);
  evaluating.set(req.scanId, req.job);
  try {
    const { preview, ...r } = await host.session.run<EvaluateResult & { preview?: ArrayBuffer }>(
      'evaluate',
      { budget: req.budget, tile: req.tile, input: host.file },
      req.job,
      host.progress(req.job),
    );
    if (!preview) return r;
    return { ...r, previewId: host.keep({ data: preview, fileName: 'preview.bin', type: BINARY }) };
  } finally {
    if (evaluating.get(req.scanId) === req.job) evaluating.delete(req.scanId);
  }
}

const BINARY = 'application/octet-stream';

export async function cleanJob(host: ScanJobHost, req: CleanRequest): Promise<CleanResult> {
  const r = await host.session.run<{
    images: ArrayBuffer;
    report: Record<string, unknown>;
    profile: CleanResult['profile'];
  }>('clean', { settings: req.settings }, req.job, host.progress(req.job));
  const imagesId = host.keep({ data: r.images, fileName: 'cleaned.bin', type: BINARY });
  return { imagesId, report: r.report, profile: r.profile };
}

/** Save; `target` is the checked output path, or undefined for a download. */
export async function saveJob(
  host: ScanJobHost,
  req: SaveRequest,
  target: string | undefined,
): Promise<SaveResult> {
  const r = await host.session.run<{
    data?: ArrayBuffer;
    fileName: string;
    bytes: number;
    caution: string;
    path?: string;
  }>(
    'save',
    {
      kind: req.kind,
      budget: req.budget,
      tile: req.tile,
      settings: req.settings,
      path: target,
      force: req.force,
      input: host.file,
    },
    req.job,
    host.progress(req.job),
  );
  if (r.data) {
    const type =
      req.kind === 'rkf' ? BINARY : `image/${extname(r.fileName).slice(1) === 'png' ? 'png' : 'tiff'}`;
    const downloadId = host.keep({ data: r.data, fileName: r.fileName, type });
    return { downloadId, fileName: r.fileName, bytes: r.bytes, caution: r.caution };
  }
  return { path: r.path, fileName: r.fileName, bytes: r.bytes, caution: r.caution };
}
