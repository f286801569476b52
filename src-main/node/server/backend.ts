/**
 * The app's back end, shared by browser mode (./http.ts) and Electron (src-main/electron/ipc.ts): it owns
 * the open scans (one worker thread each), the jobs and their progress events, and the file-access
 * policy (./access.ts). Every call arrives already validated against src-main/contract/methods.ts.
 */
import { randomBytes } from 'node:crypto';
import { EventEmitter } from 'node:events';
import { mkdtemp, readdir, realpath, rm, stat, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { basename, extname, join, resolve } from 'node:path';
import {
  type ApiMethod,
  type BatchRequest,
  type BatchResult,
  checkUploadName,
  dispatch,
  type FactorRequest,
  type Handlers,
  InputError,
  type OpenScanRequest,
  type PickRequest,
  type PickResult,
  type ProgressEvent,
  type SampleInfo,
  type SaveRequest,
  type SaveResult,
  SCAN_EXTENSIONS,
  type ScanSummary,
  type StackFrameRequest,
  UsageError,
} from '../../contract';
import { AccessPolicy } from './access';
import { runBatchJob } from './batch-bridge';
import { cleanJob, evaluateJob, type ScanJobHost, saveJob } from './scan-jobs';
import { SessionWorker } from './session-worker';
import { SpareThreads } from './spare-threads';
import { openStackFrame, type StackSession } from './stack-bridge';
import { originalFrame } from './stack-originals';
import { trace, tracing } from './trace';

const SCAN_EXT = new Set(SCAN_EXTENSIONS);

export interface BackendOptions {
  /** Folder holding the built worker entries (dist/workers). */
  workersDir: string;
  /** Folder of demo scans offered in the page. */
  samplesDir?: string;
  /** How `pick` asks the user. Browser mode: the page sends the typed path as `suggested`. */
  picker?: (req: PickRequest) => Promise<string | undefined>;
  /** Recently opened files (Electron persists them). */
  recent?: { list(): string[]; add(path: string): void };
}

const newId = () => randomBytes(9).toString('base64url');

/**
 * Quiet time the scan's foreground jobs must leave before the deeper factorisation starts: the page asks
 * for its opening evaluation 120 ms after the first factors (src-renderer/evaluate.ts), and a typed budget
 * soon after; on 2 cores the refinement beside them made the 38-dB figures of a 3-MP page 1.5–2× slower
 * (RANKFOLD_TRACE=1, 4 Dec).
 */
const REFINE_QUIET_MS = 300;

export class Backend extends EventEmitter {
  /** Per scan: one worker for encode/clean/save and one for factorisations, so a long background
   *  factorisation never delays the exact figures of a slider release. */
  private readonly scans = new Map<
    string,
    { file: string; summary: ScanSummary; session: SessionWorker; factorLane: SessionWorker }
  >();
  private readonly access: AccessPolicy;
  private readonly uploads = new Map<string, string>();
  private readonly blobs = new Map<string, { data: ArrayBuffer; fileName: string; type: string }>();
  private readonly reports = new Map<string, string>();
  private readonly batches = new Map<string, AbortController>();
  private readonly recentList: string[] = [];
  /** The open stack file (one at a time, like scans), read once and decoded a frame at a time. */
  private stack?: StackSession;
  private uploadDir?: string;

  constructor(readonly options: BackendOptions) {
    super();
    this.access = new AccessPolicy(options.samplesDir);
    this.spares = new SpareThreads(options.workersDir, () => this.busy());
    setImmediate(() => this.spares.topUp()).unref();
  }

  private readonly spares: SpareThreads;
  /** Scans being decoded by openScan. */
  private opening = 0;

  /** A job is running or waiting in some scan's threads, or a batch is running. */
  private busy(): boolean {
    if (this.batches.size > 0 || this.opening > 0) return true;
    for (const s of this.scans.values()) if (s.session.busy || s.factorLane.busy) return true;
    return false;
  }

  /** One handler per method of the contract's table (src-main/contract/methods.ts). */
  private readonly handlers: Handlers = {
    listSamples: () => this.listSamples(),
    listRecent: () => this.options.recent?.list() ?? [...this.recentList],
    upload: (req) => this.upload(req.name, req.bytes),
    pick: (req) => this.pick(req),
    openScan: (req) => this.openScan(req),
    factors: (req) => this.factors(req),
    evaluate: (req) => evaluateJob(this.host(req.scanId), req),
    clean: (req) => cleanJob(this.host(req.scanId), req),
    fetchImages: (id) => this.blob(id).data,
    stackFrame: (req) => this.stackFrame(req),
    save: (req) => this.save(req),
    batch: (req) => this.batch(req),
    openReport: (id) => this.reportPath(id),
    cancel: (job) => this.cancel(job),
    dropped: (path) => this.dropped(path),
  };

  /** Dispatch one request already validated by {@link validateRequest}. */
  call(method: ApiMethod, payload: unknown): Promise<unknown> {
    if (!tracing) return dispatch(this.handlers, method, payload);
    const t0 = performance.now();
    const job = (payload as { job?: string } | undefined)?.job ?? '';
    trace(`call ${method} ${job} start`);
    const done = (how: string) => () =>
      trace(`call ${method} ${job} ${how} ${(performance.now() - t0).toFixed(0)} ms`);
    const p = dispatch(this.handlers, method, payload);
    p.then(done('done'), done('failed'));
    return p;
  }

  private progress(e: ProgressEvent) {
    this.emit('progress', e);
  }

  // ---- access policy -------------------------------------------------------------------------

  /** Record a path the user chose; returns its real path. */
  allow(path: string, kind: PickRequest['kind']): Promise<string> {
    return this.access.allow(path, kind);
  }

  /** A file or folder dropped on the desktop window: the user chose it. */
  private async dropped(path: string): Promise<{ path: string; kind: 'file' | 'folder' }> {
    const real = await realpath(resolve(path)).catch(() => {
      throw new InputError(path, 'does not exist');
    });
    const kind = (await stat(real)).isDirectory() ? 'folder' : 'file';
    return { path: await this.allow(real, kind), kind };
  }

  private async pick(req: PickRequest): Promise<PickResult> {
    const chosen = this.options.picker ? await this.options.picker(req) : req.suggested;
    if (!chosen) return {};
    return { path: await this.allow(chosen, req.kind) };
  }

  /** Keep bytes the page uploaded from its own file picker; returns an upload id. */
  async upload(name: string, data: Uint8Array): Promise<string> {
    const ext = extname(checkUploadName(name)).toLowerCase();
    this.uploadDir ??= await mkdtemp(join(tmpdir(), 'rankfold-upload-'));
    const id = newId();
    const dir = join(this.uploadDir, id);
    const { mkdir } = await import('node:fs/promises');
    await mkdir(dir);
    const safe = basename(name).replace(/[^A-Za-z0-9._ -]/g, '_') || `scan${ext}`;
    const file = join(dir, safe);
    await writeFile(file, data);
    this.uploads.set(id, file);
    this.access.chosenFiles.add(await realpath(file));
    return id;
  }

  // ---- scans ---------------------------------------------------------------------------------

  private async listSamples(): Promise<SampleInfo[]> {
    const dir = this.options.samplesDir;
    if (!dir) return [];
    const names = await readdir(dir).catch(() => [] as string[]);
    const out: SampleInfo[] = [];
    for (const name of names.sort()) {
      if (!SCAN_EXT.has(extname(name).toLowerCase())) continue;
      const st = await stat(join(dir, name));
      out.push({ name, title: basename(name, extname(name)).replace(/[-_]+/g, ' '), bytes: st.size });
    }
    return out;
  }

  private async openScan(req: OpenScanRequest): Promise<ScanSummary> {
    let file: string;
    if (req.source.kind === 'sample') {
      if (!this.options.samplesDir) throw new UsageError('No samples folder in this installation');
      file = await this.access.readable(join(this.options.samplesDir, req.source.name));
    } else if (req.source.kind === 'upload') {
      const f = this.uploads.get(req.source.uploadId);
      if (!f) throw new UsageError(`Unknown upload ${req.source.uploadId}; pick the file again`);
      file = f;
    } else file = await this.access.readable(req.source.path);
    // A new scan takes the cores: stop the previous scan's background refinement first.
    for (const s of this.scans.values()) void s.factorLane.close();
    const session = new SessionWorker(this.options.workersDir, file, req.page)
      .adopt(this.spares.take())
      .spares(() => this.spares.take())
      .settled(() => this.spares.later());
    const scanId = newId();
    this.opening++;
    try {
      const fig = await session.open((p) => this.progress({ job: `open-${scanId}`, ...p }));
      const name = req.source.kind === 'sample' ? req.source.name : basename(file);
      const summary: ScanSummary = { scanId, name, ...fig };
      // One scan at a time per page keeps memory bounded on 24 GiB machines with huge scans.
      for (const [id, s] of this.scans) {
        void s.session.close();
        void s.factorLane.close();
        this.scans.delete(id);
      }
      const factorLane = new SessionWorker(this.options.workersDir, file, req.page, true)
        .share(session.image)
        .settled(() => this.spares.later());
      this.scans.set(scanId, { file, summary, session, factorLane });
      if (req.source.kind === 'path') this.addRecent(file);
      return summary;
    } catch (err) {
      void session.close();
      throw err;
    } finally {
      this.opening--;
      this.spares.later();
    }
  }

  private addRecent(file: string) {
    if (this.options.recent) return this.options.recent.add(file);
    const i = this.recentList.indexOf(file);
    if (i >= 0) this.recentList.splice(i, 1);
    this.recentList.unshift(file);
    this.recentList.length = Math.min(this.recentList.length, 10);
  }

  private scan(scanId: string) {
    const s = this.scans.get(scanId);
    if (!s)
      throw new UsageError(
        `Scan ${scanId} is not open (it may have been replaced by another); open it again`,
      );
    return s;
  }

  private onJob(job: string) {
    return (p: { done: number; total: number; stage: string }) => this.progress({ job, ...p });
  }

  private factors(req: FactorRequest): Promise<ArrayBuffer> {
    const s = this.scan(req.scanId);
    const lane = req.background ? s.factorLane : s.session;
    // The first, foreground pass favours speed (one power iteration); the refinement favours accuracy.
    const powerIters = req.background ? 2 : 1;
    return lane.run<ArrayBuffer>(
      'factors',
      { maxRank: req.maxRank, powerIters },
      req.job,
      this.onJob(req.job),
      req.background ? () => quiet(s.session) : undefined,
    );
  }

  /** The scan's session, file, progress and blob store, for the jobs in ./scan-jobs.ts. */
  private host(scanId: string): ScanJobHost {
    const s = this.scan(scanId);
    return {
      session: s.session,
      file: s.file,
      progress: (job) => this.onJob(job),
      keep: (b) => {
        const id = newId();
        this.putBlob(id, b);
        return id;
      },
    };
  }

  /** One frame of a stack file the user opened or chose (same access rule as scans). */
  private async stackFrame(req: StackFrameRequest): Promise<ArrayBuffer> {
    const file = await this.access.readable(req.path);
    const { originals } = req;
    const r = await openStackFrame(
      this.stack,
      file,
      req.frame,
      originals === undefined
        ? undefined
        : (h, frame) => originalFrame(originals, h, frame, (p) => this.access.readable(p)),
    );
    if (this.stack?.file !== file) this.addRecent(file);
    this.stack = r.session;
    return r.data;
  }

  /** Keep a blob for the page to fetch; only the most recent few stay, so memory stays bounded. */
  private putBlob(id: string, b: { data: ArrayBuffer; fileName: string; type: string }) {
    this.blobs.set(id, b);
    while (this.blobs.size > 6) this.blobs.delete(this.blobs.keys().next().value as string);
  }

  blob(id: string) {
    const b = this.blobs.get(id);
    if (!b) throw new UsageError(`Nothing to download under ${id}; save again`);
    return b;
  }

  private async save(req: SaveRequest): Promise<SaveResult> {
    const host = this.host(req.scanId);
    let target: string | undefined;
    if (req.path) {
      target = resolve(req.path);
      if (!this.access.saveTargets.has(target))
        throw new UsageError(`${req.path}: choose where to save in the save dialog or type the path first`);
    }
    return saveJob(host, req, target);
  }

  private async batch(req: BatchRequest): Promise<BatchResult> {
    const input = await realpath(resolve(req.input)).catch(() => {
      throw new InputError(req.input, 'folder does not exist');
    });
    if (!this.access.chosenFolders.has(input))
      throw new UsageError(`${req.input}: choose the input folder first`);
    const output = resolve(req.output);
    const outReal = await realpath(output).catch(() => output);
    if (!this.access.chosenFolders.has(outReal) && !this.access.saveTargets.has(output))
      throw new UsageError(`${req.output}: choose the output folder first`);
    if (this.batches.has(req.job)) throw new UsageError(`Batch job ${req.job} is already running`);
    const ctl = new AbortController();
    this.batches.set(req.job, ctl);
    try {
      const r = await runBatchJob(
        { ...req, input, output: outReal },
        ctl.signal,
        (e) => this.progress({ ...e, job: req.job }),
        this.options.workersDir,
      );
      let reportId: string | undefined;
      if (r.reportPath) {
        reportId = newId();
        this.reports.set(reportId, r.reportPath);
      }
      return { ...r, reportId };
    } finally {
      this.batches.delete(req.job);
    }
  }

  reportPath(id: string): string {
    const p = this.reports.get(id);
    if (!p) throw new UsageError(`Unknown report ${id}; run the batch again`);
    return p;
  }

  private async cancel(job: string): Promise<void> {
    const b = this.batches.get(job);
    if (b) b.abort();
    for (const s of this.scans.values()) {
      s.session.cancel(job);
      s.factorLane.cancel(job);
    }
  }

  async close(): Promise<void> {
    await this.spares.close();
    for (const b of this.batches.values()) b.abort();
    await Promise.all([...this.scans.values()].flatMap((s) => [s.session.close(), s.factorLane.close()]));
    this.scans.clear();
    if (this.uploadDir) await rm(this.uploadDir, { recursive: true, force: true });
  }
}

/** Resolves once `session` has had no job for {@link REFINE_QUIET_MS}. */
async function quiet(session: SessionWorker): Promise<void> {
  do {
    await session.whenIdle();
    await new Promise((r) => setTimeout(r, REFINE_QUIET_MS));
  } while (session.busy);
}
