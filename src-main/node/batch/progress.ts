/** Live progress on a terminal (stderr): files done/total, MB/s of input and an ETA by bytes. */
import cliProgress from 'cli-progress';

export interface ProgressView {
  update(p: { done: number; total: number; bytesDone: number; bytesTotal: number; failed: number }): void;
  stop(): void;
}

function fmtEta(s: number): string {
  if (!Number.isFinite(s) || s < 0) return '–';
  if (s < 90) return `${Math.round(s)} s`;
  if (s < 5400) return `${Math.round(s / 60)} min`;
  return `${(s / 3600).toFixed(1)} h`;
}

export function terminalProgress(total: number, stream: NodeJS.WriteStream = process.stderr): ProgressView {
  const started = performance.now();
  const bar = new cliProgress.SingleBar(
    {
      stream,
      format: 'batch {bar} {value}/{total} files | {mbps} MB/s | ETA {etaText} | {failed} failed',
      barsize: 28,
      hideCursor: true,
      clearOnComplete: false,
      etaBuffer: 1,
      fps: 5,
    },
    cliProgress.Presets.shades_classic,
  );
  bar.start(total, 0, { mbps: '0.0', etaText: '–', failed: 0 });
  return {
    update(p) {
      const secs = (performance.now() - started) / 1000;
      const rate = secs > 0 ? p.bytesDone / secs : 0;
      bar.update(p.done, {
        mbps: (rate / 1e6).toFixed(rate < 1e6 ? 2 : 1),
        etaText: rate > 0 ? fmtEta((p.bytesTotal - p.bytesDone) / rate) : '–',
        failed: p.failed,
      });
    },
    stop() {
      bar.stop();
    },
  };
}
