/**
 * The report of a `--total` run (issue #13, "Report"): predicted against achieved per file, the floor, quality
 * and size histograms (planned and achieved), the ten worst files with their thumbnails, and the bytes saved
 * against one ratio for all at the same total, in the HTML report and in the `--json` total line.
 */
import { describe, expect, it } from 'vitest';
import type { BatchRow } from '../../src-main/contract';
import type { CollectionInfo } from '../../src-main/node/batch/collection';
import { collectionJson } from '../../src-main/node/batch/collection-text';
import { renderReport } from '../../src-main/node/batch/report';
import type { ThumbPair } from '../../src-main/node/batch/thumbs';
import { okRow } from './rows';

// Twelve files: file-00 is the worst (30.50 dB), each next one 0.75 dB better; each writes a little under its cap.
const TOTAL = 60_000;
const rows: BatchRow[] = Array.from({ length: 12 }, (_, i) => {
  const name = `file-${String(i).padStart(2, '0')}.png`;
  return okRow(name, {
    bytes: 4000 + 100 * i,
    rawBytes: 200_000,
    ratio: 200_000 / (4000 + 100 * i),
    psnr: 30.5 + 0.75 * i,
    plan: { bytes: 4100 + 100 * i, psnr: 30.25 + 0.75 * i, floor: 30.25, total: TOTAL },
  });
});
const planned = rows.reduce((s, r) => s + r.plan!.bytes, 0);
const info: CollectionInfo = {
  total: TOTAL,
  totalText: '60.00 kB',
  favour: 'floor',
  floor: 30.25,
  planned,
  minimum: 12 * 900,
  reserve: 0,
  surveyMs: 1500,
  surveyReused: 0,
  excluded: [
    { path: 'notes.txt', message: 'notes.txt is a text file, not an image', refusal: 'not-an-image' },
  ],
  oneRatioWorst: 26.4,
  oneRatioBytes: 71_234,
};
const PIXEL = 'data:image/png;base64,iVBORw0KGgo=';
const thumbs = new Map<string, ThumbPair>(
  rows.slice(0, 10).map((r) => [r.path, { original: PIXEL, reconstruction: PIXEL }]),
);
const html = renderReport(rows, { title: 't', shards: ['0/1'], collection: info }, thumbs);
const written = rows.reduce((s, r) => s + r.bytes!, 0);

/** The bar counts of the histogram whose aria-label is `label`, from its bars' tooltips. */
function barCounts(label: string): number[] {
  const at = html.indexOf(`aria-label="${label} distribution"`);
  expect(at, label).toBeGreaterThan(0);
  const svg = html.slice(at, html.indexOf('</svg>', at));
  return [...svg.matchAll(/: (\d+) files?<\/title>/g)].map((m) => Number(m[1]));
}

describe('the report of a --total run', () => {
  it('states the total against what was written, and the floor', () => {
    expect(html).toContain('<h2>Total for the folder</h2>');
    expect(html).toContain(`total: ${written} bytes (`);
    expect(html).toMatch(/written of 60000 \(60\.00 kB\), within the total/);
    expect(html).toContain('floor: predicted 30.25 dB; achieved PSNR lowest 30.50 dB');
  });

  it('has predicted against achieved for every file: cap, bytes written, both PSNRs and their difference', () => {
    for (const r of rows) {
      const d = (r.psnr! - r.plan!.psnr).toFixed(2);
      expect(html).toContain(
        `<tr><td>${r.path}</td><td class="n">${r.plan!.bytes}</td><td class="n">${r.bytes}</td><td class="n">${r.plan!.psnr.toFixed(2)}</td><td class="n">${r.psnr!.toFixed(2)}</td><td class="n">${d}</td></tr>`,
      );
    }
  });

  it('draws the planned and the achieved quality and size histograms, each holding every file', () => {
    for (const label of ['planned PSNR', 'planned size', 'PSNR', 'file size'])
      expect(
        barCounts(label).reduce((a, b) => a + b, 0),
        label,
      ).toBe(12);
  });

  it('shows the ten worst files, worst first, each with its original and reconstruction', () => {
    expect(html).toContain('<h2>Lowest PSNR (10)</h2>');
    const pairs = [...html.matchAll(/<figure class="pair">([\s\S]*?)<\/figure>/g)].map((m) => m[1]);
    expect(pairs).toHaveLength(10);
    expect(pairs[0]).toContain('<b>file-00.png</b>');
    expect(pairs[9]).toContain('<b>file-09.png</b>');
    for (const p of pairs) expect(p.match(/<img src="data:image\/png;base64,/g)).toHaveLength(2);
    expect(html).not.toContain('<b>file-10.png</b>');
  });

  it('names the bytes saved against one ratio for all at the same total, and its worst file', () => {
    const saved = 71_234 - planned;
    expect(saved).toBeGreaterThan(0);
    expect(html).toContain(
      'one ratio for all at the same total: worst file predicted at 26.40 dB (this plan: 30.25 dB)',
    );
    expect(html).toContain(
      `bytes saved against one ratio for all: one ratio would need about 71234 bytes (71.23 kB) to give every file the floor, this plan ${planned}: ${saved} bytes`,
    );
    expect(html).toContain('left out of the plan: notes.txt is a text file, not an image');
  });

  it('gives the same figures in the --json total line', () => {
    const j = collectionJson(info, rows);
    expect(j).toMatchObject({
      event: 'total',
      total: TOTAL,
      written,
      withinTotal: true,
      floorPredicted: 30.25,
      lowestPsnr: 30.5,
      planned,
      oneRatioWorst: 26.4,
      oneRatioBytes: 71_234,
      bytesSaved: 71_234 - planned,
    });
    expect(collectionJson({ ...info, total: written - 1 }, rows).withinTotal).toBe(false);
  });

  it('a merge of shards of one plan reports the total, the reserve and the drift of each shard from the rows alone', () => {
    const shards = rows.map((r, i) => ({ ...r, shard: `${i % 2}/2` }));
    const merged = renderReport(shards, { title: 'merged', shards: ['0/2', '1/2'] });
    expect(merged).toContain('<h2>Total for the folder</h2>');
    expect(merged).toContain(`total: ${written} bytes (`);
    expect(merged).toContain(`reserve: ${TOTAL - planned} bytes`);
    expect(merged).toMatch(/drift of shard 0\/2: \d+ bytes written against \d+ planned for its 6 files/);
    expect(merged).toContain('bytes a file did not use stay unwritten');
    expect(merged).toContain('<tr><td>file-00.png</td><td class="n">4100</td><td class="n">4000</td>');
    expect(renderReport([okRow('plain.png', { bytes: 9 })], { title: 'p', shards: ['0/1'] })).not.toContain(
      'Total for the folder',
    );
  });
});
