// The survey's terminal bar (`batch --total` before it encodes): files measured of the files to measure, and
// the file measured last with its predicted PSNR range.
import { describe, expect, it } from 'vitest';
import { surveyedText, surveyProgress } from '../../src-main/node/batch/progress';

/** Just enough of a TTY write stream for cli-progress 3.12 (its Terminal class) to draw into a string. */
function fakeTty() {
  let text = '';
  const stream = {
    isTTY: true,
    columns: 120,
    write(s: string) {
      text += s;
      return true;
    },
    cursorTo() {
      text += '\r';
      return true;
    },
    clearLine: () => true,
    clearScreenDown: () => true,
    moveCursor: () => true,
    on: () => stream,
    removeListener: () => stream,
  };
  return { stream: stream as unknown as NodeJS.WriteStream, text: () => text };
}

describe('surveyProgress', () => {
  it('draws files measured of the total and ends at the total', () => {
    const t = fakeTty();
    const bar = surveyProgress(5, t.stream);
    bar.update(2, { path: 'notes.txt', error: 'notes.txt is not an image' });
    bar.update(5, { path: 'maps/sheet 4.png', psnr: [31.204, 44.019] });
    bar.stop();
    expect(t.text()).toMatch(/survey .* 0\/5 files measured/);
    expect(t.text()).toMatch(/5\/5 files measured \| ETA 0 s \| maps\/sheet 4\.png 31\.20–44\.02 dB/);
  });

  it('words a file that could not be measured', () => {
    expect(surveyedText({ path: 'notes.txt', error: 'notes.txt is not an image' })).toBe(
      'notes.txt not measured',
    );
  });
});
