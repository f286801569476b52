// The survey's terminal bar (`batch --total` before it encodes): files measured of the files to measure.
import { describe, expect, it } from 'vitest';
import { surveyProgress } from '../../src-main/node/batch/progress';

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
    bar.update(2);
    bar.update(5);
    bar.stop();
    expect(t.text()).toMatch(/survey .* 0\/5 files measured/);
    expect(t.text()).toMatch(/5\/5 files measured \| ETA 0 s/);
  });
});
