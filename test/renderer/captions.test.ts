// The page's sentences and labels. Expected strings are the ones the page showed for camera.png (512×512,
// 8-bit grey, 139 536 bytes) and a 6-frame 64×48 stack in the screenshots taken before these functions were
// moved out of src-renderer/main.ts.
import { describe, expect, it } from 'vitest';
import { hinted, type ScanSummary, type StackFrameInfo } from '../../src-main/contract';
import {
  batchDoneStatus,
  batchFileMessage,
  batchProgressText,
  batchRowText,
  encodedStatus,
  evaluateLabel,
  frameLabels,
  guiMessage,
  mapLegend,
  NO_ORIGINAL_FRAME,
  noOriginalText,
  openFailedText,
  type PaneView,
  paneLabels,
  recentLabel,
  STACK_METRICS,
  scanInfoText,
  stackCardCells,
  stackInfoText,
  stackNote,
  stackOpenedStatus,
  transportLabel,
} from '../../src-renderer/captions';

const camera: ScanSummary = {
  scanId: 's1',
  name: 'camera.png',
  width: 512,
  height: 512,
  channels: 1,
  bitDepth: 8,
  colour: 'gray',
  inputBytes: 139_536,
  rawBytes: 262_144,
  format: 'png',
};

const frame = (over: Partial<StackFrameInfo> = {}): StackFrameInfo => ({
  name: 'plate.rkf',
  frame: 3,
  frameCount: 6,
  frameNames: ['f-0.png', 'f-1.png', 'f-2.png', 'f-3.png', null, null],
  ranks: [3],
  spectrum: [{ channel: 'gray', sigma: [9, 3, 1] }],
  fileBytes: 3100,
  rawBytes: 64 * 48 * 6,
  bitDepth: 8,
  residual: false,
  psnr: 39.5,
  ssim: 0.9737,
  worst: { frame: 1, psnr: 36.6049 },
  ...over,
});

describe('scan and stack summaries', () => {
  it('the masthead line of a scan, with the channel count in the singular or plural', () => {
    expect(scanInfoText(camera)).toBe('camera.png · 512×512 px · 8-bit · 1 channel (gray) · 139.5 kB');
    expect(scanInfoText({ ...camera, channels: 3, colour: 'rgb', bitDepth: 16, inputBytes: 2_500_000 })).toBe(
      'camera.png · 512×512 px · 16-bit · 3 channels (rgb) · 2.50 MB',
    );
  });

  it('the masthead line and status of a stack', () => {
    expect(stackInfoText(frame(), { width: 64, height: 48, channels: 1 })).toBe(
      'plate.rkf · stack of 6 frames · 64×48 px · 8-bit · 1 channel · 3.1 kB',
    );
    expect(stackOpenedStatus(frame({ ranks: [3, 2, 2] }))).toBe(
      'Opened the stack plate.rkf: 6 frames, 3/2/2 eigen-frames.',
    );
  });

  it('the transport label', () => {
    expect(transportLabel('ipc')).toBe('desktop');
    expect(transportLabel('http')).toBe('browser · 127.0.0.1');
  });

  it('a recent file shows its name without folders, POSIX or Windows', () => {
    expect(recentLabel('/scans/2024/map-sheet.tif')).toBe('map-sheet.tif');
    expect(recentLabel('C:\\scans\\ledger.png')).toBe('ledger.png');
    expect(recentLabel('plain.png')).toBe('plain.png');
  });
});

describe('status lines', () => {
  it('after an encode', () => {
    expect(encodedStatus({ outputBytes: 6500, psnr: 24.5412, ssim: 0.658_61 })).toBe(
      'Encoded: 6.5 kB, PSNR 24.54 dB, SSIM 0.6586.',
    );
    expect(encodedStatus({ outputBytes: 900, psnr: Number.POSITIVE_INFINITY, ssim: 1 })).toBe(
      'Encoded: 900 B, PSNR ∞ dB, SSIM 1.0000.',
    );
  });

  it('of an encode and of a batch, in plain words', () => {
    expect(evaluateLabel({ kind: 'psnr', db: 38 }, 0)).toBe('Finding the smallest file ≥ 38 dB…');
    expect(evaluateLabel({ kind: 'rank', rank: 40 }, 64)).toBe('Encoding at rank 40 in tiles of 64…');
    expect(batchProgressText({ stage: 'done', done: 2, total: 5, file: '/in/b.png' })).toBe(
      'Batch: 2 of 5 files finished · last: b.png done',
    );
    expect(batchProgressText({ stage: 'started', done: 0, total: 1 })).toBe('Batch: 0 of 1 file finished');
  });

  it('of a finished batch, red when a file failed', () => {
    const f = (state: 'done' | 'failed') => ({ file: 'x', state });
    expect(batchDoneStatus({ files: [f('done'), f('failed'), f('done')], cancelled: false })).toEqual({
      text: 'Batch done: 2 of 3 files compressed, 1 failed.',
      isError: true,
    });
    expect(batchDoneStatus({ files: [f('done')], cancelled: false })).toEqual({
      text: 'Batch done: 1 of 1 file compressed.',
      isError: false,
    });
    // A text file in the folder is skipped, not failed (issue 14), and says so.
    expect(
      batchDoneStatus({ files: [f('done'), { file: 'notes.txt', state: 'skipped' }], cancelled: false }),
    ).toEqual({ text: 'Batch done: 1 of 2 files compressed, 1 skipped.', isError: false });
    expect(batchDoneStatus({ files: [f('done')], cancelled: true }).text).toBe('Batch cancelled.');
  });
});

describe('batch rows', () => {
  it('a file row, with its message after a colon', () => {
    expect(batchRowText({ file: 'a.png', stage: 'done', done: 1, total: 2 })).toBe('a.png — done');
    expect(batchRowText({ file: 'a.png', stage: 'failed', done: 1, total: 2, message: 'truncated' })).toBe(
      'a.png — failed: truncated',
    );
  });

  it('a message that names the file by its path starts after the path', () => {
    const message = '/tmp/my scans/in/notes.txt: is not an image Rankfold can read';
    expect(batchRowText({ file: 'notes.txt', stage: 'skipped', done: 1, total: 2, message })).toBe(
      'notes.txt — skipped: is not an image Rankfold can read',
    );
    // Only a whole path component: "old-notes.txt: …" is another file's name, kept as it is.
    expect(
      batchRowText({ file: 'notes.txt', stage: 'skipped', done: 1, total: 2, message: 'x/old-notes.txt: y' }),
    ).toBe('notes.txt — skipped: x/old-notes.txt: y');
  });

  it("a finished file's message: its error, else its size and PSNR", () => {
    expect(batchFileMessage({ file: 'a', state: 'failed', message: 'unreadable' })).toBe('unreadable');
    expect(batchFileMessage({ file: 'a', state: 'done', outputBytes: 12_345, psnr: 38.456 })).toBe(
      '12.3 kB, PSNR 38.46 dB',
    );
    expect(batchFileMessage({ file: 'a', state: 'skipped' })).toBeUndefined();
  });
});

describe('paneLabels', () => {
  const base: PaneView = {
    showing: 'model',
    mode: 'side',
    gain: 8,
    layerIndex: 0,
    tiled: false,
    tile: 64,
    rank: 20,
    held: 300,
  };
  it('names what each pane shows in each view', () => {
    expect(paneLabels(base)).toEqual({ left: 'original', right: 'rank 20' });
    expect(paneLabels({ ...base, rank: 472 }).right).toBe(
      'rank 472 (showing 300 until the deeper layers arrive)',
    );
    expect(paneLabels({ ...base, mode: 'swipe' })).toEqual({
      left: 'original | reconstruction',
      right: 'rank 20',
    });
    expect(paneLabels({ ...base, mode: 'diff' })).toEqual({ left: '', right: 'difference at rank 20 × 8' });
    expect(paneLabels({ ...base, mode: 'layer', layerIndex: 4 }).right).toBe('layer 5: σᵢuᵢvᵢᵀ');
    expect(paneLabels({ ...base, tiled: true, tile: 32, rank: 8 }).right).toBe('tiles of 32, rank ≤ 8');
  });

  it('a decoded file with a wavelet residual layer says so, and rank 0 says that layer is all there is', () => {
    expect(paneLabels({ ...base, residual: true, rank: 12 }).right).toBe(
      'the file: rank 12 + wavelet residual layer',
    );
    expect(paneLabels({ ...base, residual: true, rank: 0 }).right).toBe(
      'the file: wavelet residual layer only (rank 0)',
    );
  });

  it('a cleaning result wins over the view mode', () => {
    expect(paneLabels({ ...base, mode: 'diff', showing: 'cleaned' }).right).toBe('cleaned');
    // Short enough for a 1024 px window's pane; the legend says what mid-grey means.
    expect(paneLabels({ ...base, showing: 'removed', gain: 16 }).right).toBe('removed part × 16');
  });
});

describe('mapLegend', () => {
  it('gives every colour map a legend with the saturation level in grey levels', () => {
    // Difference: |rec − orig| · gain reaches the ends at 255 levels (8-bit): 255 / 8 ≈ 32.
    expect(mapLegend({ mode: 'diff', showing: 'model', gain: 8 })).toMatchObject({
      low: 'too dark by ≥ 32 grey levels',
      mid: 'no difference',
    });
    // Removed part: mid-grey ± 128 levels, so 128 / 8 = 16 levels saturate; light = cleaning darkened.
    expect(mapLegend({ mode: 'side', showing: 'removed', gain: 8 })).toMatchObject({
      low: 'cleaning brightened by ≥ 16 grey levels',
      mid: 'nothing removed',
      high: 'darkened by ≥ 16',
    });
    expect(mapLegend({ mode: 'layer', showing: 'model', gain: 8 })?.mid).toBe('no effect');
    expect(mapLegend({ mode: 'tiles', showing: 'model', gain: 8, tileRanks: { min: 0, max: 9 } })?.high).toBe(
      'rank 9',
    );
  });

  it('shows none where grey levels are shown as they are', () => {
    expect(mapLegend({ mode: 'side', showing: 'model', gain: 8 })).toBeUndefined();
    expect(mapLegend({ mode: 'swipe', showing: 'cleaned', gain: 8 })).toBeUndefined();
    expect(mapLegend({ mode: 'tiles', showing: 'model', gain: 8 })).toBeUndefined();
  });
});

describe('stack frame', () => {
  it('labels count frames from 1 and give the frame’s file name when the stack has one', () => {
    // Frames count from 1 on the page, as in the CLI's reports and `expand --frame`.
    expect(frameLabels(frame())).toEqual({
      left: 'original of frame 4: not available, not kept in a stack file',
      right: 'frame 4 of 6 · f-3.png · decoded from the stack file',
      position: '4 / 6',
    });
    expect(frameLabels(frame({ frame: 4 })).right).toBe('frame 5 of 6 · decoded from the stack file');
  });

  it('the original frame: not asked for, shown, or not shown and why', () => {
    expect(noOriginalText(frame())).toBe(NO_ORIGINAL_FRAME);
    const shown = frame({ original: { shown: true, note: 'original: f-3.png' } });
    expect(noOriginalText(shown)).toBeUndefined();
    expect(frameLabels(shown).left).toBe('original of frame 4 · f-3.png');
    const missing = frame({
      original: { shown: false, note: '/scans/plate does not hold f-3.png (frame 4)' },
    });
    expect(noOriginalText(missing)).toBe(
      'The original frame is not shown: /scans/plate does not hold f-3.png (frame 4).',
    );
    expect(frameLabels(missing).left).toBe('original of frame 4: not shown');
  });

  it('the Stack card readouts: values for data-value, texts for the page', () => {
    const cells = stackCardCells(frame({ ranks: [3, 2, 2] }));
    expect(Object.keys(cells)).toEqual([...STACK_METRICS]);
    // What the file records is exact.
    for (const m of STACK_METRICS) expect(cells[m].exact).toBe(true);
    expect(cells.frame).toMatchObject({ value: '4', text: '4 · f-3.png' });
    expect(cells['frame-count']).toMatchObject({ value: '6', text: '6' });
    expect(cells['eigen-frames']).toMatchObject({ value: '3', text: '3 / 2 / 2' });
    expect(cells.residual).toMatchObject({ value: '0', text: 'no' });
    expect(cells['worst-psnr']).toMatchObject({ value: '36.6049', text: '36.60 dB · frame 2' });
    const bare = stackCardCells(frame({ worst: undefined, residual: true }));
    expect(bare['worst-psnr']).toMatchObject({ value: '', text: '–' });
    expect(bare.residual).toMatchObject({ value: '1', text: 'yes' });
  });

  it('the note says whether the file records per-frame quality', () => {
    expect(stackNote(frame())).toMatch(/^PSNR and SSIM of this frame as recorded/);
    expect(stackNote(frame({ ssim: undefined }))).toMatch(/^PSNR and SSIM of this frame as recorded/);
    expect(stackNote(frame({ psnr: undefined, ssim: undefined }))).toMatch(
      /^This stack file records no per-frame/,
    );
  });
});

describe('guiMessage and openFailedText', () => {
  it('replaces the CLI advice by the app’s, by the hint code the error carries', () => {
    // The refusal as src-main/node/io/atomic.ts raises it.
    const advice = '; pass --force to overwrite it';
    expect(
      guiMessage({ message: `/tmp/x/out.rkf already exists${advice}`, details: hinted('overwrite', advice) }),
    ).toBe('out.rkf already exists; tick “replace an existing file” in Save to overwrite it');
    const tiles = ' — pass --tile 0 for a whole-image SVD';
    expect(
      guiMessage({
        message: `a.png: image is 4×4 pixels; tiles need at least 8×8${tiles}`,
        details: hinted('whole-plane', tiles),
      }),
    ).toBe('a.png: image is 4×4 pixels; tiles need at least 8×8; choose “whole plane” under Planes');
    expect(guiMessage('too big; use --frobnicate-level 3')).not.toMatch(/--/);
  });

  it('names the file as the user gave it, never a server temporary path', () => {
    const msg = '/tmp/rankfold-upload-Ab12/scan 1.png: not an image';
    expect(openFailedText('scan 1.png', '/tmp/rankfold-upload-Ab12/scan1.png: not an image')).toBe(
      'Could not open scan 1.png: scan1.png: not an image',
    );
    expect(openFailedText('/home/me/a.png', '/tmp/up/a.png: unsupported format')).toBe(
      'Could not open /home/me/a.png: unsupported format',
    );
    expect(guiMessage(msg)).not.toMatch(/\/tmp/);
  });
});

describe('openFailedText with spaces', () => {
  it('keeps the path the user typed whole', () => {
    expect(openFailedText('/data/lost scan.png', '/data/lost scan.png does not exist')).toBe(
      'Could not open /data/lost scan.png: does not exist',
    );
  });
});
