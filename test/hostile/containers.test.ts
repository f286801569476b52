// Fault campaign against the .rkf container, both layouts, in process: every single-bit flip of small
// files (version 1.1 as written now, and the version-1.0 fixtures), every truncation, appended bytes,
// unknown chunks and header edits whose chunk CRCs were recomputed. Each damaged file must be refused with
// a FormatError whose message starts with the file name; nothing here may decode to other samples.
import { createHash } from 'node:crypto';
import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { FormatError } from '../../src-main/contract';
import { type Chunk, readContainer, writeContainer } from '../../src-main/engine/codec/container';
import { crc32 } from '../../src-main/engine/codec/crc32';
import { readImageHeader } from '../../src-main/engine/codec/image-file';
import { encodeStack } from '../../src-main/engine/codec/stack-codec';
import { decodeImageFile } from '../../src-main/engine/lowrank/decode-image';
import { encodeScan } from '../../src-main/engine/lowrank/encode';
import { openStack, prepareStack } from '../../src-main/engine/lowrank/stack-frames';
import { COMPRESSORS } from '../../src-main/node/services/compress';
import { fixture } from '../helpers/fixtures';

const NAME = 'scan [damaged].rkf';

/** Deterministic integer test pattern: ramps, a 4-pixel checker and a diagonal (as test/fixtures/rkf). */
function pattern(w: number, h: number, max: number, phase: number): Float32Array {
  return Float32Array.from({ length: w * h }, (_, i) => {
    const x = i % w;
    const y = Math.floor(i / w);
    const v =
      (x / (w - 1)) * 0.5 +
      (y / (h - 1)) * 0.3 +
      (((x >> 2) + (y >> 2) + phase) & 1 ? 0.15 : 0) +
      (x === y + phase ? 0.05 : 0);
    return Math.round(Math.min(1, v) * max);
  });
}

const sha = (planes: ArrayLike<number>[]) => {
  const h = createHash('sha256');
  for (const p of planes) h.update(Float64Array.from(p as ArrayLike<number>));
  return h.digest('hex');
};

/** A 24×16 gray 8-bit scan, 16-pixel tiles, rank 3: a container of a few hundred bytes. */
function smallImage(): Uint8Array {
  const planes = [pattern(24, 16, 255, 0)];
  const img = {
    file: 'small.png',
    width: 24,
    height: 16,
    channels: 1 as const,
    bitDepth: 8 as const,
    colour: 'gray',
    hasAlpha: false,
    planes,
    meta: { format: 'png', density: 300, orientation: 1, pages: 1, page: 0 },
    inputBytes: 0,
    rawBytes: 24 * 16,
    sourceSha256: '0'.repeat(64),
  } as Parameters<typeof encodeScan>[0];
  return encodeScan(img, { budget: { kind: 'rank', rank: 3 }, tile: 16, encoder: 'rankfold test' }).bytes;
}

/** A 16×12 gray stack of 3 frames with one eigen-frame and residuals (stack version 3, container 1.4). */
function smallStack(): Uint8Array {
  const frames = [0, 1, 2].map((j) => ({ planes: [pattern(16, 12, 255, j)], name: `frame-${j}.png` }));
  return encodeStack(prepareStack({ width: 16, height: 12, bitDepth: 8, channels: 1, frames }), {
    step: 3,
    rank: 1,
  }).bytes;
}

interface Layout {
  name: string;
  /** Decode everything the way `expand` does; returns a digest of the samples. */
  decode(bytes: Uint8Array, file: string): string;
}
const imageLayout: Layout = {
  name: 'image',
  decode(bytes, file) {
    readImageHeader(bytes, file, { compressors: COMPRESSORS });
    return sha(decodeImageFile(bytes, file, { compressors: COMPRESSORS }).samples);
  },
};
const stackLayout: Layout = {
  name: 'stack',
  decode(bytes, file) {
    const r = openStack(bytes, file);
    r.verify();
    return sha(Array.from({ length: r.header.frameCount }, (_, j) => r.frame(j)).flat());
  },
};

/** The FormatError a damaged file gets (fails the test when it decodes). */
function refusal(layout: Layout, bytes: Uint8Array, what: string): FormatError {
  try {
    layout.decode(bytes, NAME);
  } catch (err) {
    if (!(err instanceof FormatError)) throw new Error(`${what}: ${String(err)} is not a FormatError`);
    expect(err.message.startsWith(`${NAME}: `), `${what}: ${err.message}`).toBe(true);
    expect(err.message, what).not.toMatch(/\n/);
    return err;
  }
  throw new Error(`${what}: the damaged file was decoded`);
}

/** Chunk map of a file, for labels: which chunk (or preamble/trailer) a byte belongs to. */
function regions(bytes: Uint8Array): (offset: number) => string {
  const v = readContainer(bytes, 'map.rkf', false);
  const spans = v.entries.map((e) => ({ from: e.offset, to: e.offset + 16 + e.length, label: e.type }));
  const indexAt = spans.length ? spans[spans.length - 1].to : 12;
  return (o) => {
    if (o < 8) return 'magic';
    if (o < 12) return 'version';
    if (o >= bytes.length - 16) return 'trailer';
    if (o >= indexAt) return 'INDX';
    return spans.find((s) => o >= s.from && o < s.to)?.label ?? '?';
  };
}

interface Subject {
  label: string;
  layout: Layout;
  bytes: Uint8Array;
  /** Bytes per flip test (8 bits each). */
  span: number;
}

const subjects: Subject[] = [
  { label: 'image 1.1 (24×16 gray)', layout: imageLayout, bytes: smallImage(), span: 8 },
  {
    // Stack version 2 in container 1.1, written at main d9c26f4 (the current writer writes version 3 in 1.4).
    label: 'stack 1.1 fixture (36×28×4 gray, residuals)',
    layout: stackLayout,
    bytes: new Uint8Array(
      readFileSync(fixture('rkf', 'stack-v2', 'v1.1-stack2-gray8-residuals-36x28x4.rkf')),
    ),
    span: 32,
  },
  {
    label: 'image 1.0 fixture',
    layout: imageLayout,
    bytes: new Uint8Array(readFileSync(fixture('rkf', 'v1.0-gray8-24x16-tile16.rkf'))),
    span: 16,
  },
  {
    label: 'stack 1.0 fixture',
    layout: stackLayout,
    bytes: new Uint8Array(readFileSync(fixture('rkf', 'v1.0-stack-gray8-16x12x3.rkf'))),
    span: 16,
  },
  // Compact framing and header: one CRC-32 over the file catches every flip; no JSON header to edit.
  { label: 'stack 1.4 (16×12×3 gray)', layout: stackLayout, bytes: smallStack(), span: 8 },
];

/** Every message seen per kind of damage, for the docs ("What bad input gets"). */
const seen = new Map<string, Set<string>>();
const note = (kind: string, err: Error) => {
  const m = err.message.slice(NAME.length + 2).replace(/\d+/g, 'N');
  if (!seen.has(kind)) seen.set(kind, new Set());
  seen.get(kind)?.add(m);
};

describe.each(subjects)('every single-bit flip: $label', (s) => {
  const where = regions(s.bytes);
  const starts = Array.from({ length: Math.ceil(s.bytes.length / s.span) }, (_, k) => k * s.span);
  const cases = starts.map((from) => {
    const to = Math.min(from + s.span, s.bytes.length);
    return {
      from,
      to,
      what: [...new Set(Array.from({ length: to - from }, (_, i) => where(from + i)))].join('+'),
    };
  });
  it('decodes intact', () => {
    expect(s.layout.decode(s.bytes, NAME)).toMatch(/^[0-9a-f]{64}$/);
  });
  it.each(cases)('bytes $from–$to ($what): all 8 bits of each are refused', ({ from, to }) => {
    let refused = 0;
    for (let o = from; o < to; o++)
      for (let bit = 0; bit < 8; bit++) {
        const b = s.bytes.slice();
        b[o] ^= 1 << bit;
        note(`flip ${where(o)}`, refusal(s.layout, b, `byte ${o} bit ${bit}`));
        refused++;
      }
    expect(refused).toBe((to - from) * 8);
  });
});

describe.each(subjects)('truncation, appended bytes: $label', (s) => {
  it('every truncation (0 … length−1 bytes) is refused', () => {
    for (let n = 0; n < s.bytes.length; n++)
      note('truncated', refusal(s.layout, s.bytes.subarray(0, n), `cut to ${n}`));
  });
  it('a copy of the file appended to itself is refused, naming where the container ends', () => {
    const twice = new Uint8Array(2 * s.bytes.length);
    twice.set(s.bytes);
    twice.set(s.bytes, s.bytes.length);
    const err = refusal(s.layout, twice, 'appended copy');
    note('appended copy', err);
    expect(err.message).toBe(
      `${NAME}: has ${s.bytes.length} unexpected bytes after the end of its container at byte ${s.bytes.length} (appended data?); a copy of its first ${s.bytes.length} bytes may expand`,
    );
  });
  it.each([1, 4, 16, 17, 300])('%i appended bytes (zeros, 0xFF, trailer-like) are refused', (n) => {
    for (const fill of [0x00, 0xff, 0x52]) {
      const b = new Uint8Array(s.bytes.length + n).fill(fill);
      b.set(s.bytes);
      const err = refusal(s.layout, b, `${n} × ${fill} appended`);
      note('appended bytes', err);
      expect(err.message).toContain(
        `${n} unexpected bytes after the end of its container at byte ${s.bytes.length}`,
      );
    }
  });
});

/** Rewrite a file's chunks (version 1.1 writer: CRCs, index, file check and trailer all recomputed). */
function rewrite(bytes: Uint8Array, edit: (chunks: Chunk[]) => Chunk[]): Uint8Array {
  const v = readContainer(bytes, 'in.rkf');
  return writeContainer(
    edit(v.entries.map((e, k) => ({ type: e.type, id: e.id, payload: v.payload(k).slice() }))),
  );
}

/**
 * A naive edit of HEAD: the HEAD chunk gets its new payload and CRC, the index and the trailer are
 * recomputed, and every other chunk — the file check of version 1.1 included — is copied as it was.
 */
function editHead(bytes: Uint8Array, edit: (head: Record<string, unknown>) => void): Uint8Array {
  const v = readContainer(bytes, 'in.rkf');
  const head = JSON.parse(Buffer.from(v.payload(0)).toString('latin1'));
  edit(head);
  const json = Uint8Array.from(JSON.stringify(head), (c) => c.charCodeAt(0));
  const parts: Uint8Array[] = [bytes.subarray(0, 12)];
  const index: number[][] = [];
  let at = 12;
  v.entries.forEach((e, k) => {
    const payload = k === 0 ? json : v.payload(k);
    const chunk = new Uint8Array(16 + payload.length);
    const dv = new DataView(chunk.buffer);
    for (let i = 0; i < 4; i++) chunk[i] = e.type.charCodeAt(i);
    dv.setUint32(4, e.id);
    dv.setUint32(8, payload.length);
    chunk.set(payload, 12);
    dv.setUint32(12 + payload.length, crc32(chunk.subarray(0, 12 + payload.length)));
    index.push([
      ...chunk.subarray(0, 8),
      0,
      0,
      0,
      0,
      (at >>> 24) & 255,
      (at >>> 16) & 255,
      (at >>> 8) & 255,
      at & 255,
      ...chunk.subarray(8, 12),
    ]);
    parts.push(chunk);
    at += chunk.length;
  });
  const ip = Uint8Array.from([0, 0, 0, index.length, ...index.flat()]);
  const indx = new Uint8Array(16 + ip.length);
  const dvi = new DataView(indx.buffer);
  indx.set([0x49, 0x4e, 0x44, 0x58]);
  dvi.setUint32(8, ip.length);
  indx.set(ip, 12);
  dvi.setUint32(12 + ip.length, crc32(indx.subarray(0, 12 + ip.length)));
  parts.push(indx);
  const trailer = new Uint8Array(16);
  const dvt = new DataView(trailer.buffer);
  trailer.set([0x52, 0x4b, 0x46, 0x49]);
  dvt.setUint32(8, at);
  dvt.setUint32(12, crc32(trailer.subarray(0, 12)));
  parts.push(trailer);
  return Buffer.concat(parts);
}

const geometryEdits: Array<[string, (h: Record<string, unknown>) => void]> = [
  ['width and height swapped', (h) => ([h.width, h.height] = [h.height, h.width])],
  ['width + 1', (h) => (h.width = (h.width as number) + 1)],
  ['width − 1', (h) => (h.width = (h.width as number) - 1)],
  ['height + 1', (h) => (h.height = (h.height as number) + 1)],
  ['height − 8', (h) => (h.height = (h.height as number) - 8)],
  ['width doubled', (h) => (h.width = (h.width as number) * 2)],
];
const imageEdits: Array<[string, (h: Record<string, unknown>) => void]> = [
  ...geometryEdits,
  ['tile 16 → 32', (h) => ((h.planes as Array<{ tile: number }>)[0].tile = 32)],
  ['tile 16 → 0 (whole plane)', (h) => ((h.planes as Array<{ tile: number }>)[0].tile = 0)],
  ['tile 16 → 17', (h) => ((h.planes as Array<{ tile: number }>)[0].tile = 17)],
];
const stackEdits: Array<[string, (h: Record<string, unknown>) => void]> = [
  ...geometryEdits,
  ['frame count 3 → 2', (h) => (h.frameCount = 2)],
];
/**
 * Edits that change values but not how the data is read: nothing in the data contradicts them, so only the
 * file check of version 1.1 (which records HEAD's CRC-32) can catch them, and only when it was not rewritten.
 */
const valueEdits: Array<[string, (h: Record<string, unknown>) => void]> = [
  ['bit depth 8 → 16', (h) => (h.bitDepth = 16)],
  ['step doubled', (h) => (h.step = (h.step as number) * 2)],
];

describe.each(subjects.filter((s) => !s.label.includes('1.4')))(
  'header edits with CRCs and index recomputed: $label',
  (s) => {
    const edits = s.layout === imageLayout ? imageEdits : stackEdits;
    const naive = s.label.includes('1.0') ? edits : [...edits, ...valueEdits];
    it.each(naive)('%s is refused', (what, edit) => {
      note(
        `header edit (${s.label.includes('1.0') ? '1.0' : '1.1'})`,
        refusal(s.layout, editHead(s.bytes, edit), what),
      );
    });
    if (!s.label.includes('1.0'))
      it.each(edits)(
        '%s is refused even when the file check is rewritten too (the data does not fit)',
        (what, edit) => {
          // Everything a framing-aware editor could recompute: only the data's own consistency is left.
          const bytes = rewrite(s.bytes, (chunks) => {
            const head = JSON.parse(Buffer.from(chunks[0].payload).toString('latin1'));
            edit(head);
            chunks[0] = {
              ...chunks[0],
              payload: Uint8Array.from(JSON.stringify(head), (c) => c.charCodeAt(0)),
            };
            return chunks;
          });
          note('header edit, file rewritten', refusal(s.layout, bytes, what));
        },
      );
  },
);

describe.each(subjects.slice(0, 2))('unknown chunks: $label', (s) => {
  it('an unknown critical chunk is refused', () => {
    const b = rewrite(s.bytes, (c) => [...c, { type: 'ZZZZ', id: 0, payload: Uint8Array.of(1, 2, 3) }]);
    const err = refusal(s.layout, b, 'critical chunk');
    note('unknown critical chunk', err);
    expect(err.message).toBe(
      `${NAME}: contains a critical chunk of type "ZZZZ" that this Rankfold does not know in the ${s.layout.name} layout; use a newer Rankfold`,
    );
  });
  it('an unknown ancillary chunk is skipped: the file decodes to the same samples', () => {
    const b = rewrite(s.bytes, (c) => [
      ...c.slice(0, 1),
      { type: 'zzzz', id: 7, payload: Uint8Array.of(9) },
      ...c.slice(1),
    ]);
    expect(s.layout.decode(b, NAME)).toBe(s.layout.decode(s.bytes, NAME));
  });
  it('a known chunk the header does not call for (a repeated plane) is refused', () => {
    const b = rewrite(s.bytes, (c) => [...c, c[c.length - 2]]);
    note('extra known chunk', refusal(s.layout, b, 'repeated chunk'));
  });
  it('a version-1.1 file whose version field says 1.0 is refused', () => {
    const b = s.bytes.slice();
    b[11] = 0;
    const err = refusal(s.layout, b, 'minor 0');
    expect(err.message).toBe(
      `${NAME}: is damaged: it declares container version 1.0, but it was written as version 1.1`,
    );
  });
});

describe('messages per kind of damage', () => {
  it('every kind of damage was seen (the wording is quoted in docs/format.md)', () => {
    const lines = [...seen].flatMap(([kind, ms]) => [...ms].map((m) => `${kind}: ${m}`));
    // RKF_PRINT_MESSAGES=1 prints them, so the documentation can quote the exact wording.
    if (process.env.RKF_PRINT_MESSAGES) console.log(lines.sort().join('\n'));
    expect(seen.size).toBeGreaterThan(5);
  });
});
