/**
 * Every request the page can make, declared once: its payload validator (which fixes the request type),
 * its result type, whether the result is binary, and which transports carry it. From this table come the
 * allow-list that IPC and HTTP check ({@link validateRequest}), the preload's and the browser client's call
 * stubs ({@link apiCalls}), and the back end's dispatcher ({@link dispatch}).
 *
 * Adding a method is one entry here plus its handler in the back end.
 */
import type {
  BatchRequest,
  BatchResult,
  CleanRequest,
  CleanResult,
  DroppedResult,
  EvaluateRequest,
  EvaluateResult,
  FactorRequest,
  OpenScanRequest,
  PickRequest,
  PickResult,
  SampleInfo,
  SaveRequest,
  SaveResult,
  ScanSummary,
  StackFrameRequest,
} from './api';
import { checkBudget, checkFields, checkTile, checkTotal } from './budget';
import { checkCleanOptions } from './clean';
import { UsageError } from './errors';
import { checkOption, checkOptional, OPTIONS } from './options';
import { checkUpload } from './upload';
import { checkBool, checkOneOf, checkString, invalidParameterError, is } from './validate';

export type Transport = 'ipc' | 'http';

/** One method: `validate` turns a wire payload into the typed request; `R` is the result type. */
export interface MethodSpec<Req, R> {
  validate(v: unknown): Req;
  /** The result is an ArrayBuffer (sent as bytes over HTTP). */
  binary?: boolean;
  /** Which transports carry it (default both). */
  transports?: readonly Transport[];
  /** Phantom: the result type. */
  readonly result?: R;
}

const method =
  <R>() =>
  <Req>(spec: MethodSpec<Req, R>): MethodSpec<Req, R> =>
    spec;

const ID_RE = /^[A-Za-z0-9_-]{1,64}$/;
function checkId(name: string, v: unknown): string {
  if (!is.string(v) || !ID_RE.test(v))
    throw invalidParameterError(name, 'an id of 1–64 letters, digits, - or _', v);
  return v;
}

function checkPath(name: string, v: unknown): string {
  const p = checkString(name, v, 4096);
  if (p.includes('\0')) throw new UsageError(`Expected a path without NUL characters for ${name}`);
  return p;
}

const optional = <T>(v: unknown, check: (v: unknown) => T): T | undefined =>
  v === undefined ? undefined : check(v);

/** The app's clean settings: noise and banding only, with the ranges of `rankfold clean`. */
export function checkCleanSettings(v: unknown): {
  noise: 'auto' | 'off' | number;
  banding: CleanRequest['settings']['banding'];
} {
  const o = checkFields('settings', v, ['noise', 'banding']);
  const { noise, banding } = checkCleanOptions({ noise: o.noise as never, banding: o.banding as never });
  return { noise, banding };
}

function checkSource(v: unknown): OpenScanRequest['source'] {
  if (!is.plainObject(v)) throw invalidParameterError('source', 'an object', v);
  const kind = checkOneOf('source.kind', v.kind, ['path', 'sample', 'upload'] as const);
  if (kind === 'path')
    return { kind, path: checkPath('source.path', checkFields('source', v, ['kind', 'path']).path) };
  if (kind === 'sample') {
    const name = checkString('source.name', checkFields('source', v, ['kind', 'name']).name, 255);
    if (!/^[A-Za-z0-9._-]+$/.test(name) || name.startsWith('.'))
      throw invalidParameterError('source.name', 'a sample file name', name);
    return { kind, name };
  }
  return {
    kind,
    uploadId: checkId('source.uploadId', checkFields('source', v, ['kind', 'uploadId']).uploadId),
  };
}

function none(name: string) {
  return (v: unknown): undefined => {
    if (v !== undefined && v !== null && !(is.plainObject(v) && Object.keys(v).length === 0))
      throw new UsageError(`${name} takes no arguments`);
    return undefined;
  };
}

/** The methods, in the order the page's API lists them. */
const METHODS = {
  /** The bundled demo scans. */
  listSamples: method<SampleInfo[]>()({ validate: none('listSamples') }),
  /** Recently opened files, newest first. */
  listRecent: method<string[]>()({ validate: none('listRecent') }),
  /** Bytes of a file the user picked in the page; returns an upload id. HTTP sends them as the body of /api/upload. */
  upload: method<string>()({ validate: checkUpload }),
  /** Ask the user for a file, folder or save target (a dialog, or the path typed in browser mode). */
  pick: method<PickResult>()({
    validate: (v): PickRequest => {
      const o = checkFields('pick', v, ['kind', 'suggested']);
      return {
        kind: checkOneOf('kind', o.kind, ['file', 'folder', 'save'] as const),
        suggested: optional(o.suggested, (s) => checkPath('suggested', s)),
      };
    },
  }),
  /** Open a scan (a path, a sample or an upload); one scan is open at a time. */
  openScan: method<ScanSummary>()({
    validate: (v): OpenScanRequest => {
      const o = checkFields('openScan', v, ['source', 'page']);
      return { source: checkSource(o.source), page: checkOptional(OPTIONS.page, o.page) };
    },
  }),
  /** σ, U, V of every plane plus the source planes, once, in the {@link encodeFactorSet} layout. */
  factors: method<ArrayBuffer>()({
    binary: true,
    validate: (v): FactorRequest => {
      const o = checkFields('factors', v, ['scanId', 'maxRank', 'job', 'background']);
      return {
        scanId: checkId('scanId', o.scanId),
        maxRank: checkOption(OPTIONS.maxRank, o.maxRank),
        job: checkId('job', o.job),
        background: optional(o.background, (b) => checkBool('background', b)),
      };
    },
  }),
  /** The encoder's real figures at a budget: what `rankfold compress --json` prints for it. */
  evaluate: method<EvaluateResult>()({
    validate: (v): EvaluateRequest => {
      const o = checkFields('evaluate', v, ['scanId', 'budget', 'tile', 'job']);
      return {
        scanId: checkId('scanId', o.scanId),
        budget: checkBudget(o.budget),
        tile: checkTile(o.tile),
        job: checkId('job', o.job),
      };
    },
  }),
  /** Clean the open scan; the planes come with {@link CleanResult.imagesId}. */
  clean: method<CleanResult>()({
    validate: (v): CleanRequest => {
      const o = checkFields('clean', v, ['scanId', 'settings', 'job']);
      return {
        scanId: checkId('scanId', o.scanId),
        settings: checkCleanSettings(o.settings),
        job: checkId('job', o.job),
      };
    },
  }),
  /** Planes kept on the back end (cleaned/removed, or a tiled preview), in the factor-set layout. */
  fetchImages: method<ArrayBuffer>()({ binary: true, validate: (v) => checkId('imagesId', v) }),
  /** One decoded frame of a stack file (`src.p` blocks) with the stack's summary in `header.stack`. */
  stackFrame: method<ArrayBuffer>()({
    binary: true,
    validate: (v): StackFrameRequest => {
      const o = checkFields('stackFrame', v, ['path', 'frame', 'originals']);
      const req: StackFrameRequest = {
        path: checkPath('path', o.path),
        frame: checkOption(OPTIONS.frame, o.frame),
      };
      if (o.originals !== undefined) req.originals = checkPath('originals', o.originals);
      return req;
    },
  }),
  /** Write the .rkf, the expanded or the cleaned image, or hand it back for a download. */
  save: method<SaveResult>()({
    validate: (v): SaveRequest => {
      const o = checkFields('save', v, [
        'scanId',
        'kind',
        'budget',
        'tile',
        'settings',
        'path',
        'force',
        'job',
      ]);
      return {
        scanId: checkId('scanId', o.scanId),
        kind: checkOneOf('kind', o.kind, ['rkf', 'expanded', 'cleaned', 'removed'] as const),
        budget: checkBudget(o.budget),
        tile: checkTile(o.tile),
        settings: optional(o.settings, checkCleanSettings),
        path: optional(o.path, (p) => checkPath('path', p)),
        force: optional(o.force, (f) => checkBool('force', f)),
        job: checkId('job', o.job),
      };
    },
  }),
  /** Compress a chosen folder into a chosen folder, with progress events. */
  batch: method<BatchResult>()({
    validate: (v): BatchRequest => {
      const o = checkFields('batch', v, [
        'input',
        'output',
        'budget',
        'tile',
        'force',
        'job',
        'total',
        'dryRun',
      ]);
      return {
        input: checkPath('input', o.input),
        output: checkPath('output', o.output),
        budget: checkBudget(o.budget),
        tile: checkTile(o.tile),
        force: optional(o.force, (f) => checkBool('force', f)),
        job: checkId('job', o.job),
        // Issue #13: a total for the folder, and its plan-only run.
        total: optional(o.total, checkTotal),
        dryRun: optional(o.dryRun, (f) => checkBool('dryRun', f)),
      };
    },
  }),
  /** Desktop: the main process opens the report in the system viewer. Browser mode opens /api/report/ID. */
  openReport: method<string | undefined>()({ validate: (v) => checkId('reportId', v), transports: ['ipc'] }),
  /** Cancel a job by its id (no error when it has already finished). */
  cancel: method<void>()({ validate: (v) => checkId('job', v) }),
  /** Desktop only: a file or folder dropped on the window; the shell records it as chosen. */
  dropped: method<DroppedResult>()({ validate: (v) => checkPath('path', v), transports: ['ipc'] }),
};

export type ApiMethod = keyof typeof METHODS;
export const API_METHODS = Object.keys(METHODS) as ApiMethod[];
type RequestOf<M extends ApiMethod> = ReturnType<(typeof METHODS)[M]['validate']>;
type ResultOf<M extends ApiMethod> = (typeof METHODS)[M] extends MethodSpec<unknown, infer R> ? R : never;

/** True when `transport` carries `method`. */
export function carries(method: ApiMethod, transport: Transport): boolean {
  const t: readonly Transport[] | undefined = METHODS[method].transports;
  return !t || t.includes(transport);
}

function isApiMethod(v: unknown): v is ApiMethod {
  return is.string(v) && Object.hasOwn(METHODS, v);
}

/**
 * Validate one request: the method must be declared and carried by `transport` (when given), and its
 * payload must pass its validator. @throws UsageError
 */
export function validateRequest(
  method: unknown,
  payload: unknown,
  transport?: Transport,
): { method: ApiMethod; payload: unknown } {
  if (!isApiMethod(method) || (transport && !carries(method, transport)))
    throw new UsageError(`Unknown API method ${JSON.stringify(method)}`);
  return { method, payload: METHODS[method].validate(payload) };
}

/** One handler per method, typed by the table. */
export type Handlers = { [M in ApiMethod]: (req: RequestOf<M>) => ResultOf<M> | Promise<ResultOf<M>> };

/** Run the handler of an already validated request. */
export function dispatch(handlers: Handlers, method: ApiMethod, payload: unknown): Promise<unknown> {
  return Promise.resolve((handlers[method] as (p: unknown) => unknown)(payload));
}

/** A call stub per method: no argument when the method takes none. */
export type ApiCalls = {
  [M in keyof typeof METHODS]: RequestOf<M> extends undefined
    ? () => Promise<ResultOf<M>>
    : (req: RequestOf<M>) => Promise<ResultOf<M>>;
};

/** The call stubs of a transport, from one `send(method, payload)` function. */
export function apiCalls(send: (method: ApiMethod, payload: unknown) => Promise<unknown>): ApiCalls {
  const out: Record<string, (p?: unknown) => Promise<unknown>> = {};
  for (const m of API_METHODS) out[m] = (p) => send(m, p);
  return out as ApiCalls;
}
