/**
 * Live progress on a terminal (stderr): files done/total, MB/s of input and an ETA by bytes; and, before a
 * `--total` run encodes, the survey's own bar (files measured, ETA by files).
 */
import cliProgress from 'cli-progress';
import type { SurveyedFile } from './run-options';

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

/** One bar of the batch's look on `stream` (the ETA is computed here, not by cli-progress). */
function makeBar(stream: NodeJS.WriteStream, format: string) {
  const options = { stream, format, barsize: 28, hideCursor: true, clearOnComplete: false, fps: 5 };
  return new cliProgress.SingleBar(options, cliProgress.Presets.shades_classic);
}

export function terminalProgress(total: number, stream: NodeJS.WriteStream = process.stderr): ProgressView {
  const started = performance.now();
  const bar = makeBar(
    stream,
    'batch {bar} {value}/{total} files | {mbps} MB/s | ETA {etaText} | {failed} failed',
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

/**
 * The survey's bar (`batch --total`, `--survey`): files measured of the files to measure, an ETA, and the file
 * measured last with its predicted PSNR range.
 */
export function surveyProgress(
  total: number,
  stream: NodeJS.WriteStream = process.stderr,
): { update(done: number, file?: SurveyedFile): void; stop(): void } {
  const started = performance.now();
  const bar = makeBar(stream, 'survey {bar} {value}/{total} files measured | ETA {etaText} | {last}');
  bar.start(total, 0, { etaText: '–', last: '' });
  return {
    update(done, file) {
      const secs = (performance.now() - started) / 1000;
      bar.update(done, {
        etaText: done > 0 ? fmtEta((secs * (total - done)) / done) : '–',
        last: file ? surveyedText(file) : '',
      });
    },
    stop() {
      bar.stop();
    },
  };
}

/** One surveyed file in words: `camera.png 31.20–44.02 dB`, or `notes.txt not measured`. */
export function surveyedText(f: SurveyedFile): string {
  if (f.psnr) return `${f.path} ${f.psnr[0].toFixed(2)}–${f.psnr[1].toFixed(2)} dB`;
  return `${f.path} not measured`;
}
