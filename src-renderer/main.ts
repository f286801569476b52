/**
 * The page: open a scan, look at its spectrum, move the rank or set a budget, compare, clean, save and
 * run folders. Plain TypeScript modules; charts by uPlot. Talks to the back end only through the
 * contract (./transport.ts picks IPC or HTTP).
 */
// First: makes navigator.language usable before the chart library reads it.
import './locale-guard';
import 'uplot/dist/uPlot.min.css';
import './styles.css';
import {
  type Budget,
  type CompressReport,
  decodeFactorSet,
  type EvaluateResult,
  parseBudgetText,
  type ScanSummary,
  type StackFrameInfo,
} from '../src-main/contract';
import { LowRankModel } from './model';
import { profilePlot, SpectrumCharts } from './spectrum';
import { connect } from './transport';
import { CompareView, type ViewMode, type ViewSource } from './viewer';

const LOSSY_CAUTION =
  'Caution: this output is lossy and changes pixel data. Keep preservation masters lossless; medical, forensic and legal ' +
  "images need your institution's approval. Follow your local digitisation guidelines.";
const CLEANING_CAUTION =
  'Caution: cleaning alters pixel data. Keep the original and the removed part where your institution requires it; never ' +
  'clean preservation masters, medical, forensic or legal images without approval. Follow your local digitisation guidelines.';

/** Rank of the first factorisation: small enough to show within a second on a 12-megapixel scan. */
const FIRST_PASS_RANK = 24;
/** Rank of the background factorisation that follows, by scan size (megapixels → rank). */
function secondPassRank(pixels: number): number {
  return pixels <= 1e6 ? 300 : pixels <= 4e6 ? 200 : pixels <= 16e6 ? 120 : 80;
}

const $ = <T extends HTMLElement = HTMLElement>(id: string) => document.getElementById(id) as T;
const api = connect();
const newJob = () => `j${Math.random().toString(36).slice(2, 10)}`;

const state: {
  scan?: ScanSummary;
  model?: LowRankModel;
  budget: Budget;
  budgetRank?: number;
  tiled: boolean;
  tile: number;
  preview?: { planes: Float32Array[]; tiles?: EvaluateResult['tileRanks'] };
  cleaned?: { cleaned: Float32Array[]; removed: Float32Array[] };
  calib?: { rank: number; bytes: number };
  evalSeq: number;
  openedAt: number;
  firstPaintMs?: number;
  job?: string;
  batchJob?: string;
  reportId?: string;
  showing: 'model' | 'cleaned' | 'removed';
} = { budget: { kind: 'rank', rank: 1 }, tiled: false, tile: 64, evalSeq: 0, openedAt: 0, showing: 'model' };

const view = new CompareView(
  $<HTMLCanvasElement>('canvas-left'),
  $<HTMLCanvasElement>('canvas-right'),
  $('stage'),
);
const charts = new SpectrumCharts($('chart-sigma'), $('chart-error'));
const rankInput = $<HTMLInputElement>('rank');

$('transport').textContent = api.transport() === 'ipc' ? 'desktop' : 'browser · 127.0.0.1';
$('clean-caution').textContent = CLEANING_CAUTION;
$('save-caution').textContent = LOSSY_CAUTION;

// ---- status and progress ------------------------------------------------------------------------

function status(text: string, isError = false) {
  const el = $('status-text');
  el.textContent = text;
  el.style.color = isError ? '#9b2c1a' : '';
  if (isError) el.dataset.error = text;
  else delete el.dataset.error;
}
function busy(job: string | undefined, label?: string) {
  state.job = job;
  $('status-progress').hidden = !job;
  $('status-cancel').hidden = !job;
  if (job && label) status(label);
  ($('status-progress') as HTMLProgressElement).removeAttribute('value');
}
api.onProgress((e) => {
  if (e.job === state.batchJob) return batchProgress(e);
  if (e.job !== state.job) return;
  const p = $<HTMLProgressElement>('status-progress');
  if (e.total > 0) {
    p.max = e.total;
    p.value = e.done;
  }
  status(`${e.stage}${e.file ? ` — ${e.file}` : ''} (${e.done}/${e.total})`);
});
$('status-cancel').addEventListener('click', () => {
  if (state.job) void api.cancel(state.job);
});
const fail = (err: unknown) => status(err instanceof Error ? err.message : String(err), true);

// ---- formatting ---------------------------------------------------------------------------------

function fmtBytes(b: number): string {
  if (b >= 1e9) return `${(b / 1e9).toFixed(2)} GB`;
  if (b >= 1e6) return `${(b / 1e6).toFixed(2)} MB`;
  if (b >= 1e3) return `${(b / 1e3).toFixed(1)} kB`;
  return `${Math.round(b)} B`;
}
const fmt: Record<string, (v: number) => string> = {
  psnr: (v) => (Number.isFinite(v) ? `${v.toFixed(2)} dB` : '∞ dB'),
  ssim: (v) => v.toFixed(4),
  ratio: (v) => `${v.toFixed(1)} : 1`,
  bytes: fmtBytes,
  bpp: (v) => v.toFixed(3),
  'spectral-bound': (v) => v.toFixed(2),
  'frobenius-optimal': (v) => v.toFixed(1),
  frobenius: (v) => v.toFixed(1),
};

function setReadouts(values: Partial<Record<string, number>>, exact: boolean, rank: number | undefined) {
  const box = $('readouts');
  for (const el of box.querySelectorAll<HTMLElement>('.readout')) {
    const m = el.dataset.metric!;
    const v = values[m];
    const dd = el.querySelector('dd')!;
    if (v === undefined || Number.isNaN(v)) {
      if (!exact) continue;
      el.dataset.value = '';
      dd.textContent = '–';
    } else {
      el.dataset.value = String(v);
      dd.textContent = (exact ? '' : '≈ ') + fmt[m](v);
    }
  }
  box.dataset.state = exact ? 'exact' : 'estimate';
  box.dataset.rank = rank === undefined ? '' : String(rank);
  box.dataset.budget = JSON.stringify(state.budget);
  const pill = $('readout-state');
  pill.textContent = exact ? 'encoded' : 'estimate';
  pill.classList.toggle('exact', exact);
}

/** Instant figures for rank k from the spectrum; sizes from the last real encode (or a first guess). */
function estimate(k: number) {
  const m = state.model;
  const s = state.scan;
  if (!m || !s) return;
  const perRank = state.calib
    ? state.calib.bytes / state.calib.rank
    : m.planes.length * (m.width + m.height + 1);
  const bytes = perRank * k + 128;
  const fo = m.frobeniusOptimal(k);
  setReadouts(
    {
      psnr: m.psnrOptimal(k),
      bytes,
      ratio: s.rawBytes / bytes,
      bpp: (8 * bytes) / (s.width * s.height),
      'spectral-bound': m.spectralBound(k),
      'frobenius-optimal': fo,
      frobenius: fo,
    },
    false,
    k,
  );
}

function showReport(r: CompressReport, rank: number | undefined) {
  setReadouts(
    {
      psnr: r.psnr,
      ssim: r.ssim,
      ratio: r.ratio,
      bytes: r.outputBytes,
      bpp: r.bpp,
      'spectral-bound': r.errors.spectralBound,
      'frobenius-optimal': r.errors.frobeniusOptimal,
      frobenius: r.errors.frobenius,
    },
    true,
    rank,
  );
}

// ---- view sources -------------------------------------------------------------------------------

function modelSource(): ViewSource | undefined {
  const m = state.model;
  if (!m) return undefined;
  const tiles = state.preview?.tiles?.[0];
  return {
    width: m.width,
    height: m.height,
    peak: m.displayPeak,
    original: m.planes.map((p) => p.src),
    recon: () => {
      if (state.showing === 'cleaned' && state.cleaned) return state.cleaned.cleaned;
      if (state.showing === 'removed' && state.cleaned) return removedPlanes(m.displayPeak);
      if (state.tiled && state.preview) return state.preview.planes;
      return m.planes.map((p) => p.acc);
    },
    layer: (i) => {
      const k = Math.min(m.maxRank - 1, Math.max(0, i));
      return m.planes.map((p) => ({
        s: p.sigma[k],
        u: p.u.subarray(k * m.height, (k + 1) * m.height),
        v: p.v.subarray(k * m.width, (k + 1) * m.width),
      }));
    },
    tiles: tiles ? { tile: tiles.tile, cols: tiles.cols, rows: tiles.rows, ranks: tiles.ranks } : undefined,
  };
}

/** The removed part offset to mid-grey and amplified by the gain control, rebuilt when the gain changes. */
let removedView: { gain: number; planes: Float32Array[] } | undefined;
function removedPlanes(peak: number): Float32Array[] {
  const c = state.cleaned!;
  if (!removedView || removedView.gain !== view.gain) {
    const mid = peak / 2;
    removedView = {
      gain: view.gain,
      planes: c.removed.map((a) => {
        const out = new Float32Array(a.length);
        for (let i = 0; i < a.length; i++) out[i] = mid + view.gain * a[i];
        return out;
      }),
    };
  }
  return removedView.planes;
}

function labelPanes() {
  const k = Number(rankInput.value);
  const right =
    state.showing === 'cleaned'
      ? 'cleaned'
      : state.showing === 'removed'
        ? `removed part × ${view.gain} (mid-grey = nothing removed)`
        : view.mode === 'diff'
          ? `difference at rank ${k} × ${view.gain}`
          : view.mode === 'layer'
            ? `layer ${view.layerIndex + 1}: σᵢuᵢvᵢᵀ`
            : state.tiled
              ? `tiles of ${state.tile}, rank ≤ ${k}`
              : `rank ${k}`;
  $('label-left').textContent =
    view.mode === 'side' ? 'original' : view.mode === 'swipe' ? 'original | reconstruction' : '';
  $('label-right').textContent = right;
}

// ---- rank changes: rebuild in the page, repaint each frame --------------------------------------

let animating = false;
let stepStart = 0;
function pump() {
  const m = state.model;
  if (!m) return;
  if (animating) return;
  animating = true;
  const frame = () => {
    if (m !== state.model) {
      animating = false;
      return pump();
    }
    const done = m.step(10);
    view.paint();
    if (m.applied > 0 && state.firstPaintMs === undefined && state.openedAt) {
      // The first reconstruction is on screen (the spectrum was drawn before it).
      state.firstPaintMs = performance.now() - state.openedAt;
      document.body.dataset.firstPaintMs = state.firstPaintMs.toFixed(1);
    }
    if (done) {
      animating = false;
      const ms = performance.now() - stepStart;
      document.body.dataset.lastStepMs = ms.toFixed(2);
      document.body.dataset.appliedRank = String(m.applied);
      if (state.openedAt && document.body.dataset.initialRankMs === undefined)
        document.body.dataset.initialRankMs = (performance.now() - state.openedAt).toFixed(1);
      return;
    }
    requestAnimationFrame(frame);
  };
  // First chunk synchronously, so a one-layer step is painted within the input event's frame.
  frame();
}

function setRank(k: number, fromUser: boolean) {
  const m = state.model;
  if (!m) return;
  stepStart = performance.now();
  rankInput.value = String(k);
  $('rank-out').textContent = String(k);
  charts.mark(k, state.budgetRank);
  if (!state.tiled) {
    m.setTarget(k);
    pump();
  }
  if (fromUser) state.budget = { kind: 'rank', rank: k };
  estimate(k);
  labelPanes();
}

rankInput.addEventListener('input', () => {
  state.showing = 'model';
  setRank(Number(rankInput.value), true);
  syncBudgetField();
});
rankInput.addEventListener('change', () => scheduleEvaluate());

function syncBudgetField() {
  const b = $<HTMLInputElement>('budget');
  if (document.activeElement !== b) b.value = `rank ${rankInput.value}`;
}

// ---- exact figures from the encoder -------------------------------------------------------------

let evalTimer: ReturnType<typeof setTimeout> | undefined;
let evalRunning = false;
let evalAgain = false;
function scheduleEvaluate() {
  if (evalTimer) clearTimeout(evalTimer);
  evalTimer = setTimeout(() => void evaluateNow(), 120);
}

async function evaluateNow() {
  const s = state.scan;
  if (!s) return;
  if (evalRunning) {
    evalAgain = true;
    return;
  }
  evalRunning = true;
  const seq = ++state.evalSeq;
  const budget = state.budget;
  const job = newJob();
  busy(job, 'Encoding at this budget…');
  try {
    const r = await api.evaluate({ scanId: s.scanId, budget, tile: state.tiled ? state.tile : 0, job });
    if (seq !== state.evalSeq || JSON.stringify(budget) !== JSON.stringify(state.budget)) return;
    const ranks = r.report.ranks;
    const rank = ranks[0]?.rank ?? ranks[0]?.tiles?.max;
    // Tiled mode: the page shows the encoder's own decoded result, fetched before the figures turn exact.
    if (r.previewId) {
      const { arrays, header } = decodeFactorSet(await api.fetchImages(r.previewId));
      if (seq !== state.evalSeq) return;
      state.preview = {
        planes: header.channels.map((_, p) => arrays[`rec.${p}`] as Float32Array),
        tiles: r.tileRanks,
      };
    } else state.preview = undefined;
    $('stage').dataset.tiles = String(r.tileRanks?.[0]?.ranks.length ?? '');
    if (budget.kind === 'rank') {
      if (!state.tiled) state.calib = { rank: budget.rank, bytes: r.report.outputBytes };
      showReport(r.report, budget.rank);
    } else {
      state.budgetRank = rank;
      if (rank !== undefined) setRank(rank, false);
      showReport(r.report, rank);
    }
    view.setSource(modelSource()!);
    status(
      `Encoded: ${fmtBytes(r.report.outputBytes)}, PSNR ${fmt.psnr(r.report.psnr)}, SSIM ${r.report.ssim.toFixed(4)}.`,
    );
  } catch (err) {
    if (seq === state.evalSeq && s === state.scan) fail(err);
  } finally {
    busy(undefined);
    evalRunning = false;
    if (evalAgain) {
      evalAgain = false;
      scheduleEvaluate();
    }
  }
}

/** Budget text: sizes and % (as the CLI's --budget), `0.5 bpp`, `38 dB` (PSNR floor) or `rank 40`. */
export function parseBudgetField(text: string): Budget {
  const t = text.trim();
  const rank = /^rank\s*(\d+)$/i.exec(t);
  if (rank) return { kind: 'rank', rank: Number(rank[1]) };
  const bpp = /^(\d+(?:\.\d+)?)\s*bpp$/i.exec(t);
  if (bpp) return { kind: 'bpp', bpp: Number(bpp[1]) };
  const db = /^(\d+(?:\.\d+)?)\s*db$/i.exec(t);
  if (db) return { kind: 'psnr', db: Number(db[1]) };
  return parseBudgetText(t);
}

$('budget-form').addEventListener('submit', (e) => {
  e.preventDefault();
  if (!state.model) return status('Open a scan first.', true);
  try {
    const b = parseBudgetField($<HTMLInputElement>('budget').value);
    state.budget = b;
    if (b.kind === 'rank') {
      state.budgetRank = b.rank;
      setRank(Math.min(b.rank, Number(rankInput.max)), false);
    } else if (b.kind === 'psnr') {
      state.budgetRank = state.model.rankForPsnr(b.db);
      charts.mark(Number(rankInput.value), state.budgetRank);
    }
    void evaluateNow();
  } catch (err) {
    fail(err);
  }
});

for (const r of document.querySelectorAll<HTMLInputElement>('input[name="tiling"]'))
  r.addEventListener('change', () => {
    state.tiled = r.value === 'tiled' && r.checked;
    state.preview = undefined;
    rankInput.max = String(state.tiled ? state.tile : (state.model?.maxRank ?? 1));
    if (!state.tiled && state.model) setRank(Number(rankInput.value), true);
    labelPanes();
    scheduleEvaluate();
  });
$<HTMLSelectElement>('tile-size').addEventListener('change', (e) => {
  state.tile = Number((e.target as HTMLSelectElement).value);
  if (state.tiled) {
    rankInput.max = String(state.tile);
    scheduleEvaluate();
  }
});

// ---- opening scans ------------------------------------------------------------------------------

let openSeq = 0;
async function open(source: Parameters<typeof api.openScan>[0]['source']) {
  const seq = ++openSeq;
  const current = () => seq === openSeq;
  leaveStack();
  state.openedAt = performance.now();
  state.model = undefined;
  state.firstPaintMs = undefined;
  delete document.body.dataset.firstPaintMs;
  delete document.body.dataset.initialRankMs;
  delete document.body.dataset.refined;
  const job = newJob();
  busy(job, 'Reading the scan…');
  try {
    const scan = await api.openScan({ source });
    if (!current()) return;
    document.body.dataset.openMs = (performance.now() - state.openedAt).toFixed(1);
    state.scan = scan;
    state.cleaned = undefined;
    state.preview = undefined;
    state.calib = undefined;
    state.showing = 'model';
    $('scan-info').textContent =
      `${scan.name} · ${scan.width}×${scan.height} px · ${scan.bitDepth}-bit · ${scan.channels} channel${scan.channels > 1 ? 's' : ''} (${scan.colour}) · ${fmtBytes(scan.inputBytes)}`;
    $('drop-hint').hidden = true;
    const minDim = Math.min(scan.width, scan.height);
    busy(job, 'Factoring…');
    const first = await api.factors({ scanId: scan.scanId, maxRank: Math.min(minDim, FIRST_PASS_RANK), job });
    if (!current()) return;
    document.body.dataset.factorsMs = (performance.now() - state.openedAt).toFixed(1);
    installModel(first, Math.min(20, minDim));
    busy(undefined);
    status(`Opened ${scan.name}. Refining the spectrum in the background…`);
    void scheduleEvaluate();
    const k2 = Math.min(minDim, secondPassRank(scan.width * scan.height));
    if (k2 > FIRST_PASS_RANK) {
      const job2 = newJob();
      const more = await api.factors({ scanId: scan.scanId, maxRank: k2, job: job2, background: true });
      if (current()) {
        installModel(more, Number(rankInput.value));
        document.body.dataset.refined = scan.scanId;
        status(`Spectrum to rank ${k2} ready.`);
      }
    } else status(`Opened ${scan.name}.`);
    void refreshRecent();
  } catch (err) {
    if (!current()) return;
    busy(undefined);
    fail(err);
  }
}

function installModel(buf: ArrayBuffer, rank: number) {
  const model = new LowRankModel(buf);
  state.model = model;
  rankInput.disabled = false;
  rankInput.min = '1';
  rankInput.max = String(state.tiled ? state.tile : model.maxRank);
  charts.show(model);
  view.setSource(modelSource()!);
  $<HTMLInputElement>('layer').max = String(model.maxRank);
  setRank(Math.min(rank, model.maxRank), state.budget.kind === 'rank');
  syncBudgetField();
  for (const id of ['clean-run']) $<HTMLButtonElement>(id).disabled = false;
}

$<HTMLInputElement>('file-input').addEventListener('change', async (e) => {
  const f = (e.target as HTMLInputElement).files?.[0];
  if (f) await uploadAndOpen(f);
});

async function uploadAndOpen(f: File) {
  try {
    busy(newJob(), `Uploading ${f.name}…`);
    const id = await api.upload(f.name, await f.arrayBuffer());
    await open({ kind: 'upload', uploadId: id });
  } catch (err) {
    busy(undefined);
    fail(err);
  }
}

async function openPath(path: string) {
  try {
    const r = await api.pick({ kind: 'file', suggested: path });
    if (r.path) await openChosen(r.path);
  } catch (err) {
    fail(err);
  }
}

/** A chosen path: a stack file (.rkf) opens in stack mode, anything else as a scan. */
function openChosen(path: string) {
  return /\.rkf$/i.test(path) ? openStack(path) : open({ kind: 'path', path });
}

// ---- stack files: a frame slider over one .rkf with the stack layout ----------------------------

const frameInput = $<HTMLInputElement>('frame');
const stackState: { path?: string; info?: StackFrameInfo; want: number; loading?: number; seq: number } = {
  want: 0,
  seq: 0,
};

function leaveStack() {
  stackState.path = undefined;
  stackState.info = undefined;
  stackState.seq++;
  $('stack-card').hidden = true;
  frameInput.disabled = true;
  delete document.body.dataset.stackFrame;
}

async function openStack(path: string) {
  ++openSeq; // a scan still opening must not take over the view
  leaveStack();
  state.model = undefined;
  state.scan = undefined;
  state.cleaned = undefined;
  state.preview = undefined;
  state.showing = 'model';
  rankInput.disabled = true;
  stackState.path = path;
  stackState.want = 0;
  busy(newJob(), 'Reading the stack…');
  await loadFrame(stackState.seq);
}

/** Fetch the frame the slider asks for; slider moves during a fetch coalesce into one more fetch. */
async function loadFrame(seq: number) {
  if (stackState.loading === seq || !stackState.path) return;
  stackState.loading = seq;
  try {
    while (seq === stackState.seq) {
      const want = stackState.want;
      const buf = await api.stackFrame({ path: stackState.path, frame: want });
      if (seq !== stackState.seq) return;
      showFrame(buf);
      if (stackState.want === want) break;
    }
    busy(undefined);
  } catch (err) {
    busy(undefined);
    if (seq === stackState.seq) fail(err);
  } finally {
    if (stackState.loading === seq) stackState.loading = undefined;
  }
}

function showFrame(buf: ArrayBuffer) {
  const { header, arrays } = decodeFactorSet(buf);
  const info = header.stack;
  if (!info) throw new Error('the back end sent no stack summary');
  const first = !stackState.info;
  stackState.info = info;
  const original = header.channels.map((_, c) => arrays[`src.${c}`] as Uint8Array | Uint16Array);
  const recon = original.map((a) => Float32Array.from(a));
  view.setSource({
    width: header.width,
    height: header.height,
    peak: header.peak,
    original,
    recon: () => recon,
  });
  const label = info.frameNames[info.frame] ?? `frame ${info.frame + 1}`;
  $('label-left').textContent = `frame ${info.frame + 1} of ${info.frameCount} · decoded`;
  $('label-right').textContent = `${label} · decoded (the originals are not in the file)`;
  $('frame-out').textContent = `${info.frame + 1} / ${info.frameCount}`;
  frameInput.value = String(info.frame + 1);
  const put = (metric: string, value: number, text: string) => {
    const el = document.querySelector<HTMLElement>(`#stack-card [data-metric="${metric}"]`)!;
    el.dataset.value = Number.isNaN(value) ? '' : String(value);
    el.querySelector('dd')!.textContent = text;
  };
  put('frame', info.frame + 1, `${info.frame + 1} · ${label}`);
  put('frame-count', info.frameCount, String(info.frameCount));
  put('eigen-frames', Math.max(...info.ranks), info.ranks.join(' / '));
  put('residual', info.residual ? 1 : 0, info.residual ? 'yes' : 'no');
  const w = info.worst;
  put('worst-psnr', w ? w.psnr : Number.NaN, w ? `${w.psnr.toFixed(2)} dB · frame ${w.frame + 1}` : '–');
  // Sizes are the whole stack's: the eigen-frames are shared by every frame.
  setReadouts(
    {
      psnr: info.psnr,
      ssim: info.ssim,
      bytes: info.fileBytes,
      ratio: info.rawBytes / info.fileBytes,
      bpp: (8 * info.fileBytes) / (header.width * header.height * info.frameCount),
    },
    true,
    undefined,
  );
  const hasQuality = info.psnr !== undefined || info.ssim !== undefined;
  for (const m of ['psnr', 'ssim'])
    if (!hasQuality) document.querySelector(`#readouts [data-metric="${m}"] dd`)!.textContent = 'not in file';
  $('readout-state').textContent = 'stack file';
  $('stack-note').textContent = hasQuality
    ? 'PSNR and SSIM of this frame as recorded in the file; sizes are for the whole stack.'
    : 'This stack file records no per-frame PSNR or SSIM and holds no originals to compare against, so only sizes are shown (bytes, ratio and bits per pixel of the whole stack; the eigen-frames are shared by every frame). Per-frame figures are in the report of `rankfold compress --stack --json`.';
  document.body.dataset.stackFrame = String(info.frame);
  if (first) {
    $('stack-card').hidden = false;
    $('drop-hint').hidden = true;
    frameInput.min = '1';
    frameInput.max = String(info.frameCount);
    frameInput.disabled = false;
    charts.showFrameMode(info.spectrum, Math.max(...info.ranks));
    $('scan-info').textContent =
      `${info.name} · stack of ${info.frameCount} frames · ${header.width}×${header.height} px · ${info.bitDepth}-bit · ${header.channels.length} channel${header.channels.length > 1 ? 's' : ''} · ${fmtBytes(info.fileBytes)}`;
    status(`Opened the stack ${info.name}: ${info.frameCount} frames, ${info.ranks.join('/')} eigen-frames.`);
    void refreshRecent();
  }
}

frameInput.addEventListener('input', () => {
  stackState.want = Number(frameInput.value) - 1;
  $('frame-out').textContent = `${frameInput.value} / ${frameInput.max}`;
  void loadFrame(stackState.seq);
});

$('path-form').addEventListener('submit', (e) => {
  e.preventDefault();
  const p = $<HTMLInputElement>('path-input').value.trim();
  if (p) void openPath(p);
});
api.onOpenPath((p) => void openChosen(p));

async function refreshSamples() {
  const list = $('samples');
  const samples = await api.listSamples().catch(() => []);
  list.replaceChildren(
    ...samples.map((s) => {
      const li = document.createElement('li');
      const b = document.createElement('button');
      b.textContent = s.title;
      b.title = `${s.name} · ${fmtBytes(s.bytes)}`;
      b.dataset.sample = s.name;
      b.addEventListener('click', () => void open({ kind: 'sample', name: s.name }));
      li.append(b);
      return li;
    }),
  );
  if (!samples.length) list.textContent = 'none installed (npm run samples)';
}

async function refreshRecent() {
  const list = $('recent');
  const items = await api.listRecent().catch(() => []);
  list.replaceChildren(
    ...items.map((p) => {
      const li = document.createElement('li');
      const b = document.createElement('button');
      b.textContent = p.split(/[\\/]/).pop() ?? p;
      b.title = p;
      b.addEventListener('click', () => void openPath(p));
      li.append(b);
      return li;
    }),
  );
}

// Drag and drop: files upload (browser) or open by path (desktop); a dropped folder fills the batch input.
const stage = $('stage');
stage.addEventListener('dragover', (e) => {
  e.preventDefault();
  stage.classList.add('dragover');
});
stage.addEventListener('dragleave', () => stage.classList.remove('dragover'));
stage.addEventListener('drop', (e) => {
  e.preventDefault();
  stage.classList.remove('dragover');
  const dropped = e.dataTransfer?.files?.[0];
  if (dropped && api.openDropped) {
    // Desktop: the shell reads the real path of what was dropped (file or folder).
    void api.openDropped(dropped).then((r) => {
      if (!r) return;
      if (r.kind === 'file') return openChosen(r.path);
      $<HTMLInputElement>('batch-in').value = r.path;
      selectTab('batch');
    }, fail);
    return;
  }
  const items = [...(e.dataTransfer?.items ?? [])];
  const entry = items[0]?.webkitGetAsEntry?.();
  if (entry?.isDirectory) {
    status('Folders go to the Batch tab: type the folder path there (the browser does not reveal it).');
    selectTab('batch');
    return;
  }
  const f = e.dataTransfer?.files?.[0];
  if (f) void uploadAndOpen(f);
});

// ---- compare toolbar ----------------------------------------------------------------------------

for (const b of document.querySelectorAll<HTMLButtonElement>('[data-mode]'))
  b.addEventListener('click', () => {
    view.mode = b.dataset.mode as ViewMode;
    for (const o of document.querySelectorAll<HTMLButtonElement>('[data-mode]'))
      o.setAttribute('aria-pressed', String(o === b));
    labelPanes();
    view.paint();
  });
$('zoom-fit').addEventListener('click', () => view.fit());
$('zoom-1').addEventListener('click', () => view.zoom(1, undefined, 1));
$('zoom-in').addEventListener('click', () => view.zoom(1.5));
$('zoom-out').addEventListener('click', () => view.zoom(1 / 1.5));
$<HTMLInputElement>('gain').addEventListener('input', (e) => {
  view.gain = Number((e.target as HTMLInputElement).value);
  labelPanes();
  view.paint();
});
$<HTMLInputElement>('layer').addEventListener('input', (e) => {
  view.layerIndex = Math.max(0, Number((e.target as HTMLInputElement).value) - 1);
  labelPanes();
  view.paint();
});

// ---- tabs ---------------------------------------------------------------------------------------

function selectTab(name: 'clean' | 'save' | 'batch') {
  for (const t of ['clean', 'save', 'batch']) {
    $(`tab-${t}`).setAttribute('aria-selected', String(t === name));
    $(`panel-${t}`).hidden = t !== name;
  }
}
for (const t of ['clean', 'save', 'batch'] as const)
  $(`tab-${t}`).addEventListener('click', () => selectTab(t));

// ---- clean --------------------------------------------------------------------------------------

$<HTMLSelectElement>('clean-noise').addEventListener('change', (e) => {
  $('clean-noise-sigma').hidden = (e.target as HTMLSelectElement).value !== 'fixed';
});

function cleanSettings() {
  const noiseSel = $<HTMLSelectElement>('clean-noise').value;
  return {
    noise:
      noiseSel === 'fixed'
        ? Number($<HTMLInputElement>('clean-noise-sigma').value)
        : (noiseSel as 'auto' | 'off'),
    banding: $<HTMLSelectElement>('clean-banding').value as 'auto' | 'off' | 'rows' | 'columns' | 'both',
  };
}

$('clean-run').addEventListener('click', async () => {
  const s = state.scan;
  if (!s) return status('Open a scan first.', true);
  const job = newJob();
  busy(job, 'Cleaning…');
  try {
    const r = await api.clean({ scanId: s.scanId, settings: cleanSettings(), job });
    const { header, arrays } = decodeFactorSet(await api.fetchImages(r.imagesId));
    const n = header.channels.length;
    const removed = Array.from({ length: n }, (_, p) => arrays[`removed.${p}`] as Float32Array);
    state.cleaned = {
      cleaned: Array.from({ length: n }, (_, p) => arrays[`cleaned.${p}`] as Float32Array),
      removed,
    };
    removedView = undefined;
    state.showing = 'removed';
    const shown = [
      'noiseSigma',
      'noiseSource',
      'threshold',
      'method',
      'psnrChange',
      'changedSamples',
      'removedRms',
      'noiseSkipped',
    ];
    $('clean-report').textContent = Object.entries(r.report)
      .filter(
        ([k, v]) =>
          shown.includes(k) && (typeof v === 'number' || typeof v === 'string' || typeof v === 'boolean'),
      )
      .map(([k, v]) => `${k}: ${typeof v === 'number' ? Number(v.toPrecision(6)) : v}`)
      .join('\n');
    $('clean-report').dataset.done = 'true';
    profilePlot($('clean-profile'), r.profile.columns, r.profile.rows);
    for (const id of ['clean-show-cleaned', 'clean-show-removed', 'clean-show-model'])
      $<HTMLButtonElement>(id).disabled = false;
    view.setSource(modelSource()!);
    labelPanes();
    status('Cleaned. Showing the removed part; compare it with the original before you save.');
  } catch (err) {
    fail(err);
  } finally {
    busy(undefined);
  }
});
for (const [id, what] of [
  ['clean-show-cleaned', 'cleaned'],
  ['clean-show-removed', 'removed'],
  ['clean-show-model', 'model'],
] as const)
  $(id).addEventListener('click', () => {
    state.showing = what;
    labelPanes();
    view.paint();
  });

// ---- save ---------------------------------------------------------------------------------------

$('save-run').addEventListener('click', async () => {
  const s = state.scan;
  if (!s) return status('Open a scan first.', true);
  const kind = (document.querySelector<HTMLInputElement>('input[name="save-kind"]:checked')?.value ??
    'rkf') as 'rkf' | 'expanded' | 'cleaned';
  const typed = $<HTMLInputElement>('save-path').value.trim();
  const job = newJob();
  busy(job, 'Saving…');
  try {
    let path: string | undefined;
    if (typed || api.transport() === 'ipc') {
      const chosen = await api.pick({ kind: 'save', suggested: typed || undefined });
      if (!chosen.path && api.transport() === 'ipc') return busy(undefined);
      path = chosen.path;
    }
    const r = await api.save({
      scanId: s.scanId,
      kind,
      budget: state.budget,
      tile: state.tiled ? state.tile : 0,
      settings: kind === 'cleaned' ? cleanSettings() : undefined,
      path,
      force: $<HTMLInputElement>('save-force').checked,
      job,
    });
    const out = $('save-result');
    out.replaceChildren(`${r.path ?? r.fileName}: ${fmtBytes(r.bytes)}\n`);
    if (r.downloadId && api.downloadUrl) {
      const a = document.createElement('a');
      a.href = api.downloadUrl(r.downloadId);
      a.download = r.fileName;
      a.textContent = `Download ${r.fileName}`;
      out.append(a);
      a.click();
    }
    $('save-caution').textContent = r.caution;
    status(`Saved ${r.fileName}.`);
  } catch (err) {
    fail(err);
  } finally {
    busy(undefined);
  }
});

// ---- batch --------------------------------------------------------------------------------------

const batchRows = new Map<string, HTMLLIElement>();
function batchProgress(e: { done: number; total: number; stage: string; file?: string; message?: string }) {
  status(`Batch: ${e.done}/${e.total} ${e.stage}${e.file ? ` — ${e.file}` : ''}`);
  if (!e.file) return;
  let li = batchRows.get(e.file);
  if (!li) {
    li = document.createElement('li');
    batchRows.set(e.file, li);
    $('batch-files').append(li);
  }
  li.dataset.state = e.stage;
  li.textContent = `${e.file} — ${e.stage}${e.message ? `: ${e.message}` : ''}`;
}

$('batch-run').addEventListener('click', async () => {
  const input = $<HTMLInputElement>('batch-in').value.trim();
  const output = $<HTMLInputElement>('batch-out').value.trim();
  if (!input || !output) return status('Type the input and output folders first.', true);
  const job = newJob();
  state.batchJob = job;
  batchRows.clear();
  $('batch-files').replaceChildren();
  $<HTMLButtonElement>('batch-cancel').disabled = false;
  $<HTMLButtonElement>('batch-run').disabled = true;
  $<HTMLButtonElement>('batch-report').disabled = true;
  try {
    const budget = parseBudgetField($<HTMLInputElement>('batch-budget').value);
    const inPick = await api.pick({ kind: 'folder', suggested: input });
    const outPick = await api.pick({ kind: 'folder', suggested: output });
    if (!inPick.path || !outPick.path) return;
    status('Batch running…');
    const r = await api.batch({
      input: inPick.path,
      output: outPick.path,
      budget,
      tile: state.tiled ? state.tile : 'auto',
      job,
    });
    for (const f of r.files)
      batchProgress({
        done: 0,
        total: r.files.length,
        stage: f.state,
        file: f.file,
        message:
          f.message ??
          (f.outputBytes !== undefined
            ? `${fmtBytes(f.outputBytes)}, PSNR ${f.psnr?.toFixed(2)} dB`
            : undefined),
      });
    state.reportId = r.reportId;
    $<HTMLButtonElement>('batch-report').disabled = !r.reportId;
    const failed = r.files.filter((f) => f.state === 'failed').length;
    $('batch-files').dataset.finished = 'true';
    status(
      r.cancelled ? 'Batch cancelled.' : `Batch done: ${r.files.length} files, ${failed} failed.`,
      failed > 0,
    );
  } catch (err) {
    fail(err);
  } finally {
    state.batchJob = undefined;
    $<HTMLButtonElement>('batch-cancel').disabled = true;
    $<HTMLButtonElement>('batch-run').disabled = false;
  }
});
$('batch-cancel').addEventListener('click', () => {
  if (state.batchJob) void api.cancel(state.batchJob);
});
$('batch-report').addEventListener('click', () => {
  if (state.reportId) void api.openReport(state.reportId);
});

// ---- desktop menu ------------------------------------------------------------------------------

api.onMenuCommand?.((c) => {
  if (c === 'open')
    void api
      .pick({ kind: 'file' })
      .then((r) => (r.path ? open({ kind: 'path', path: r.path }) : undefined), fail);
  else if (c === 'open-folder')
    void api.pick({ kind: 'folder' }).then((r) => {
      if (!r.path) return;
      $<HTMLInputElement>('batch-in').value = r.path;
      selectTab('batch');
    }, fail);
  else if (c === 'save') {
    selectTab('save');
    $('save-run').click();
  } else if (c.startsWith('view-'))
    document.querySelector<HTMLButtonElement>(`[data-mode="${c.slice(5)}"]`)?.click();
  else if (c === 'zoom-fit') view.fit();
  else if (c === 'zoom-1') view.zoom(1, undefined, 1);
  else if (c === 'zoom-in') view.zoom(1.5);
  else if (c === 'zoom-out') view.zoom(1 / 1.5);
});

// ---- start --------------------------------------------------------------------------------------

void refreshSamples();
void refreshRecent();
labelPanes();
document.body.dataset.ready = 'true';
