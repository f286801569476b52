// Manifest (JSON lines), CSV (RFC 4180) and merge of shard manifests; the HTML report is self-contained.
import { appendFile, mkdtemp, readFile, rm } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { type BatchRow, MANIFEST_VERSION } from '../../src-main/contract';
import { readManifest, rowsToCsv, rowToJson, writeManifest } from '../../src-main/node/batch/manifest';
import { joinRows, mergeManifests } from '../../src-main/node/batch/merge';
import { shardOf } from '../../src-main/node/batch/plan';
import { histogramSvg, renderReport, WorstSoFar, worstRows } from '../../src-main/node/batch/report';

let dir: string;
beforeAll(async () => {
  dir = await mkdtemp(join(tmpdir(), 'rankfold-manifest-'));
});
afterAll(async () => {
  await rm(dir, { recursive: true, force: true });
});

function row(path: string, extra: Partial<BatchRow> = {}): BatchRow {
  return {
    v: MANIFEST_VERSION,
    path,
    output: path.replace(/\.[^.]+$/, '.rkf'),
    inputAbs: `/in/${path}`,
    outputAbs: `/out/${path}`,
    status: 'ok',
    bytes: 1000,
    rawBytes: 8000,
    inputBytes: 5000,
    ratio: 8,
    psnr: 35,
    ssim: 0.95,
    shard: '0/1',
    at: '2026-12-01T00:00:00.000Z',
    ...extra,
  };
}

describe('manifest', () => {
  it('round-trips rows, keeps Infinity PSNR, ignores a torn last line and takes the last row per path', async () => {
    const f = join(dir, 'm.jsonl');
    await writeManifest(f, [row('b.png'), row('a.png', { psnr: Number.POSITIVE_INFINITY })]);
    const text = await readFile(f, 'utf8');
    expect(text.split('\n')[0]).toContain('"path":"a.png"'); // sorted by path
    await appendFile(
      f,
      `${rowToJson(row('b.png', { status: 'failed', error: { name: 'InputError', message: 'b.png: is empty (0 bytes)' } }))}\n{"v":1,"path":"c.p`,
    );
    const r = await readManifest(f);
    expect(r.skippedLines).toBe(1);
    expect(r.rows.find((x) => x.path === 'a.png')!.psnr).toBe(Number.POSITIVE_INFINITY);
    expect(r.rows.find((x) => x.path === 'b.png')!.status).toBe('failed');
    expect(r.rows).toHaveLength(2);
  });

  it('writes CSV with RFC 4180 quoting (commas, quotes and line breaks inside fields; CRLF line ends)', () => {
    const csv = rowsToCsv([
      row('with, comma "q".png', { status: 'failed', error: { name: 'E', message: 'line1\nline2' } }),
    ]);
    const lines = csv.split('\r\n');
    expect(lines[0].split(',').slice(0, 3)).toEqual(['path', 'output', 'status']);
    // RFC 4180 §2.6–2.7: fields with commas, quotes or line breaks are quoted; quotes doubled.
    expect(lines[1].startsWith('"with, comma ""q"".png",')).toBe(true);
    expect(csv).toContain('"line1\nline2"');
    expect(csv.endsWith('\r\n')).toBe(true);
  });
});

describe('merge', () => {
  const paths = Array.from({ length: 30 }, (_, i) => `box/${i}.tif`);
  const n = 3;
  const shardRows = (s: number) =>
    paths.filter((p) => shardOf(p, n) === s).map((p) => row(p, { shard: `${s}/${n}` }));

  it('joins complete shards into one sorted set with no warnings', () => {
    const j = joinRows([0, 1, 2].map((s) => ({ file: `m${s}`, rows: shardRows(s) })));
    expect(j.rows.map((r) => r.path)).toEqual(paths.slice().sort());
    expect(j.warnings).toEqual([]);
    expect(j.shards).toEqual(['0/3', '1/3', '2/3']);
  });

  it('warns about a missing shard, a duplicate path, a row in the wrong shard and mixed shard counts', () => {
    const wrong = row(paths.find((p) => shardOf(p, n) === 1)!, { shard: `0/${n}` });
    const j = joinRows([
      { file: 'm0', rows: [...shardRows(0), wrong] },
      { file: 'm1', rows: shardRows(1) },
    ]);
    expect(j.warnings.join('\n')).toContain('no rows from shard 2/3');
    expect(j.warnings.join('\n')).toContain(`${wrong.path} belongs to shard 1/3, not 0/3`);
    expect(j.warnings.join('\n')).toContain(`${wrong.path} appears in both m0 and m1`);
    const mixed = joinRows([
      {
        file: 'a',
        rows: [
          row('x.png', { shard: `${shardOf('x.png', 2)}/2` }),
          row('y.png', { shard: `${shardOf('y.png', 5)}/5` }),
        ],
      },
    ]);
    expect(mixed.warnings.join('\n')).toContain('different shard counts (2, 5)');
  });

  it('mergeManifests writes the merged manifest, CSV and report from shard files', async () => {
    const files: string[] = [];
    for (let s = 0; s < n; s++) {
      const f = join(dir, `rankfold-manifest-${s}of${n}.jsonl`);
      await writeManifest(f, shardRows(s));
      files.push(f);
    }
    const r = await mergeManifests(files, { outDir: join(dir, 'merged') });
    expect(r.summary.total).toBe(paths.length);
    expect(r.warnings).toEqual([]);
    expect((await readManifest(join(dir, 'merged', 'rankfold-manifest.jsonl'))).rows).toHaveLength(
      paths.length,
    );
    expect((await readFile(join(dir, 'merged', 'rankfold-manifest.csv'), 'utf8')).split('\r\n')).toHaveLength(
      paths.length + 2,
    );
    await expect(mergeManifests([join(dir, 'missing.jsonl')])).rejects.toThrow('manifest');
  });
});

describe('report', () => {
  const rows = [
    row('good.png', { psnr: 41.5, ratio: 12 }),
    row('worse.png', { psnr: 28.25, ratio: 30 }),
    row('exact.png', { psnr: Number.POSITIVE_INFINITY, ratio: 2 }),
    row('bad <script>.png', {
      status: 'failed',
      error: { name: 'InputError', message: 'bad <script>.png: is empty (0 bytes)' },
    }),
  ];

  it('is one offline page: no external URL, inline SVG plots, sortable table, failures escaped', () => {
    const html = renderReport(rows, { title: 'Harrowgate County Survey Office, box 12', shards: ['0/1'] });
    expect(html).not.toMatch(/(?:src|href)\s*=\s*["']?(?:https?:)?\/\//i);
    expect(html).not.toMatch(/@import|url\(\s*['"]?https?:/i);
    expect(html).toContain("default-src 'none'");
    // Ratio, PSNR and file size (issue #13 asks for the size histogram too).
    expect((html.match(/<svg /g) ?? []).length).toBe(3);
    expect(html).toContain('data-k="psnr" data-num');
    expect(html).toContain('data-k="ratio" data-num');
    expect(html).toContain('data-k="error"');
    expect(html).toContain('bad &lt;script&gt;.png: is empty (0 bytes)');
    expect(html).not.toContain('bad <script>');
    expect(html).toContain('Failures (1)');
  });

  it('names ranks in words in the report (the CSV keeps the short form)', () => {
    const ranks: BatchRow['ranks'] = [
      { channel: 'gray', tiles: { count: 1786, min: 0, max: 27, mean: 4.25, total: 7590 } },
      { channel: 'alpha', rank: 1 },
    ];
    const html = renderReport([row('tiled.png', { ranks })], { title: 't', shards: ['0/1'] });
    expect(html).toContain('gray: 1786 tiles, rank 0 to 27 (mean 4.3); alpha: rank 1');
    expect(html).not.toContain('t1786[');
    expect(rowsToCsv([row('tiled.png', { ranks })])).toContain('gray:t1786[0-27] alpha:1');
  });

  it('picks the lowest PSNR files for thumbnails, exact files last', () => {
    expect(worstRows(rows, 2).map((r) => r.path)).toEqual(['worse.png', 'good.png']);
  });

  it('WorstSoFar: every file that ends among the worst was at or below the bound when it was dispatched', () => {
    // Simulated batches: 2 to 4 workers, random PSNRs with ties and exact files, random finishing order.
    let seed = 7;
    const rnd = () => {
      seed = (seed * 1103515245 + 12345) % 2147483648;
      return seed / 2147483648;
    };
    for (let trial = 0; trial < 200; trial++) {
      const n = 1 + Math.floor(rnd() * 40);
      const jobs = 2 + Math.floor(rnd() * 3);
      const files = Array.from({ length: n }, (_, i) => ({
        path: `f${String(i).padStart(2, '0')}.png`,
        psnr: rnd() < 0.1 ? Number.POSITIVE_INFINITY : 30 + Math.floor(rnd() * 8),
      }));
      const worst = new WorstSoFar(6);
      const finished: BatchRow[] = [];
      const admitted = new Set<string>();
      const running: typeof files = [];
      let next = 0;
      while (finished.length < n) {
        while (running.length < jobs && next < n) {
          const f = files[next++];
          if (f.psnr <= worst.bound()) admitted.add(f.path);
          running.push(f);
        }
        const f = running.splice(Math.floor(rnd() * running.length), 1)[0];
        const row = { v: MANIFEST_VERSION, path: f.path, status: 'ok', psnr: f.psnr } as BatchRow;
        finished.push(row);
        worst.add(row);
        // The tracker holds exactly the worst rows finished so far.
        for (const r of worstRows(finished, 6)) expect(worst.has(r.path)).toBe(true);
      }
      for (const r of worstRows(finished, 6))
        expect(admitted.has(r.path), `trial ${trial}: ${r.path}`).toBe(true);
    }
  });

  it('histogram bins every finite value once', () => {
    const svg = histogramSvg([1, 2, 2, 3, Number.POSITIVE_INFINITY], 'PSNR', 'dB', 4);
    const counts = [...svg.matchAll(/: (\d+) files?<\/title>/g)].map((m) => Number(m[1]));
    expect(counts.reduce((a, b) => a + b, 0)).toBe(4);
  });
});
