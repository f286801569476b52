/**
 * Pick the transport at start-up: Electron's preload puts `window.rankfold` on the page (IPC); otherwise
 * the page talks HTTP + Server-Sent Events to `rankfold serve` with the token from its own URL.
 * Both implement the same contract, so the rest of the page cannot tell which one it has.
 */
import { fromErrorPayload, type ProgressEvent, type RankfoldApi } from '../src-main/contract';

declare global {
  interface Window {
    rankfold?: RankfoldApi;
  }
}

class HttpApi implements RankfoldApi {
  private progressCbs = new Set<(e: ProgressEvent) => void>();
  private source?: EventSource;

  constructor(private readonly token: string) {}

  transport(): 'http' {
    return 'http';
  }

  private async post(method: string, payload?: unknown): Promise<unknown> {
    const res = await fetch(`/api/call/${method}`, {
      method: 'POST',
      headers: { 'Content-Type': 'application/json', 'X-Rankfold-Token': this.token },
      body: payload === undefined ? '' : JSON.stringify(payload),
    });
    if ((res.headers.get('content-type') ?? '').startsWith('application/octet-stream'))
      return res.arrayBuffer();
    const body = (await res.json()) as {
      ok: boolean;
      value?: unknown;
      error?: { name: string; message: string };
    };
    if (!body.ok) throw fromErrorPayload(body.error ?? { name: 'Error', message: `HTTP ${res.status}` });
    return body.value;
  }

  listSamples = () => this.post('listSamples') as ReturnType<RankfoldApi['listSamples']>;
  listRecent = () => this.post('listRecent') as ReturnType<RankfoldApi['listRecent']>;
  pick = (req: Parameters<RankfoldApi['pick']>[0]) =>
    this.post('pick', req) as ReturnType<RankfoldApi['pick']>;
  openScan = (req: Parameters<RankfoldApi['openScan']>[0]) =>
    this.post('openScan', req) as ReturnType<RankfoldApi['openScan']>;
  factors = (req: Parameters<RankfoldApi['factors']>[0]) => this.post('factors', req) as Promise<ArrayBuffer>;
  evaluate = (req: Parameters<RankfoldApi['evaluate']>[0]) =>
    this.post('evaluate', req) as ReturnType<RankfoldApi['evaluate']>;
  clean = (req: Parameters<RankfoldApi['clean']>[0]) =>
    this.post('clean', req) as ReturnType<RankfoldApi['clean']>;
  fetchImages = (id: string) => this.post('fetchImages', id) as Promise<ArrayBuffer>;
  stackFrame = (req: Parameters<RankfoldApi['stackFrame']>[0]) =>
    this.post('stackFrame', req) as Promise<ArrayBuffer>;
  save = (req: Parameters<RankfoldApi['save']>[0]) =>
    this.post('save', req) as ReturnType<RankfoldApi['save']>;
  batch = (req: Parameters<RankfoldApi['batch']>[0]) =>
    this.post('batch', req) as ReturnType<RankfoldApi['batch']>;
  cancel = async (job: string) => {
    await this.post('cancel', job);
  };

  async upload(name: string, bytes: ArrayBuffer): Promise<string> {
    const res = await fetch(`/api/upload?name=${encodeURIComponent(name)}`, {
      method: 'POST',
      headers: { 'Content-Type': 'application/octet-stream', 'X-Rankfold-Token': this.token },
      body: bytes,
    });
    const body = (await res.json()) as {
      ok: boolean;
      value?: string;
      error?: { name: string; message: string };
    };
    if (!body.ok || !body.value)
      throw fromErrorPayload(body.error ?? { name: 'Error', message: `upload failed (HTTP ${res.status})` });
    return body.value;
  }

  async openReport(reportId: string): Promise<void> {
    window.open(
      `/api/report/${encodeURIComponent(reportId)}?token=${encodeURIComponent(this.token)}`,
      '_blank',
      'noopener',
    );
  }

  /** URL of a saved file for the browser to download (browser mode only). */
  downloadUrl(id: string): string {
    return `/api/download/${encodeURIComponent(id)}?token=${encodeURIComponent(this.token)}`;
  }

  onProgress(cb: (e: ProgressEvent) => void): () => void {
    if (!this.source) {
      this.source = new EventSource(`/api/events?token=${encodeURIComponent(this.token)}`);
      this.source.addEventListener('progress', (ev) => {
        const e = JSON.parse((ev as MessageEvent<string>).data) as ProgressEvent;
        for (const c of this.progressCbs) c(e);
      });
    }
    this.progressCbs.add(cb);
    return () => this.progressCbs.delete(cb);
  }

  onOpenPath(): () => void {
    return () => undefined;
  }
}

export type PageApi = RankfoldApi & { downloadUrl?: (id: string) => string };

export function connect(): PageApi {
  if (window.rankfold) return window.rankfold;
  const token = new URLSearchParams(location.search).get('token') ?? '';
  return new HttpApi(token);
}
