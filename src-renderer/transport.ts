/**
 * Pick the transport at start-up: Electron's preload puts `window.rankfold` on the page (IPC); otherwise
 * the page talks HTTP + Server-Sent Events to `rankfold serve` with the token from its own URL.
 * Both implement the same contract, so the rest of the page cannot tell which one it has.
 */
import { apiCalls, type ProgressEvent, type RankfoldApi, unwrapReply } from '../src-main/contract';

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

  /** One POST per call; a binary result comes back as bytes, anything else as the contract's reply. */
  private async post(method: string, payload?: unknown): Promise<unknown> {
    const res = await fetch(`/api/call/${method}`, {
      method: 'POST',
      headers: { 'Content-Type': 'application/json', 'X-Rankfold-Token': this.token },
      body: payload === undefined ? '' : JSON.stringify(payload),
    });
    if ((res.headers.get('content-type') ?? '').startsWith('application/octet-stream'))
      return res.arrayBuffer();
    return unwrapReply(await res.json(), `HTTP ${res.status}`);
  }

  private readonly calls = apiCalls((method, payload) => this.post(method, payload));
  listSamples = this.calls.listSamples;
  listRecent = this.calls.listRecent;
  pick = this.calls.pick;
  openScan = this.calls.openScan;
  factors = this.calls.factors;
  evaluate = this.calls.evaluate;
  clean = this.calls.clean;
  fetchImages = this.calls.fetchImages;
  stackFrame = this.calls.stackFrame;
  save = this.calls.save;
  batch = this.calls.batch;
  cancel = this.calls.cancel;

  /** The one binary request: the name in `?name=`, the bytes as the body (see METHODS.upload). */
  async upload(name: string, bytes: ArrayBuffer): Promise<string> {
    const res = await fetch(`/api/upload?name=${encodeURIComponent(name)}`, {
      method: 'POST',
      headers: { 'Content-Type': 'application/octet-stream', 'X-Rankfold-Token': this.token },
      body: bytes,
    });
    return unwrapReply(await res.json(), `upload failed (HTTP ${res.status})`) as string;
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
