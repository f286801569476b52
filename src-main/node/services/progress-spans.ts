/**
 * One progress for a command made of parts (encode, then `--compare`): each part reports 0…1 of its own
 * work, mapped onto its share of the whole. The whole never goes backwards, and only the last part may
 * say "done" — an earlier part's "done" is reported under the part's own name (issue #14: the CLI said
 * "done 100%", then "compare 97%").
 */
type ProgressSink = (p: { stage: string; fraction: number }) => void;

export class ProgressSpans {
  private last = 0;
  constructor(private readonly sink: ProgressSink | undefined) {}

  /**
   * A reporter for the part covering [from, to] of the whole; `name` replaces its "done" unless the part
   * ends the whole (to = 1).
   */
  part(from: number, to: number, name: string): (stage: string, fraction: number) => void {
    return (stage, fraction) => {
      if (!this.sink) return;
      const f = Number.isFinite(fraction) ? Math.min(1, Math.max(0, fraction)) : 0;
      this.last = Math.max(this.last, from + (to - from) * f);
      this.sink({ stage: stage === 'done' && to < 1 ? name : stage, fraction: this.last });
    };
  }
}
