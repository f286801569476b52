/** A manifest row for batch tests: an `ok` row of `path` in shard 0/1, with `extra` on top. */
import { type BatchRow, MANIFEST_VERSION } from '../../src-main/contract';

export function okRow(path: string, extra: Partial<BatchRow> = {}): BatchRow {
  return {
    v: MANIFEST_VERSION,
    path,
    output: `${path}.rkf`,
    inputAbs: `/in/${path}`,
    outputAbs: `/out/${path}.rkf`,
    status: 'ok',
    shard: '0/1',
    at: '2026-12-01T00:00:00.000Z',
    ...extra,
  };
}
