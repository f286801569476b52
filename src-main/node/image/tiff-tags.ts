/** The few TIFF tags that decide, before libvips reads a page, whether Rankfold can read it (TIFF 6.0). */
import { open } from 'node:fs/promises';

/** The tags of one TIFF image directory that decide whether Rankfold can read it (TIFF 6.0). */
export interface TiffFacts {
  /** Tag 262 PhotometricInterpretation (undefined when absent). */
  photometric?: number;
  /** Tag 277 SamplesPerPixel (default 1). */
  samplesPerPixel: number;
  /** Tag 258 BitsPerSample (default [1]). */
  bitsPerSample: number[];
  /** Tag 339 SampleFormat (default [1] = unsigned integer). */
  sampleFormat: number[];
  /** Tag 274 Orientation (undefined when absent). */
  orientation?: number;
}

/**
 * Read tags 258, 262, 274, 277 and 339 of IFD `page` of a classic TIFF (TIFF 6.0 §2: header, IFD entries of
 * 12 bytes, values in the entry when they fit in 4 bytes). BigTIFF and anything odd give undefined, and
 * the file is left to libvips.
 */
export async function readTiffFacts(file: string, page = 0): Promise<TiffFacts | undefined> {
  const fh = await open(file, 'r');
  try {
    const { size } = await fh.stat();
    const read = async (at: number, n: number) => {
      if (at < 0 || at + n > size) throw new RangeError('outside the file');
      const b = Buffer.alloc(n);
      await fh.read(b, 0, n, at);
      return b;
    };
    const h = await read(0, 8);
    const order = h.toString('latin1', 0, 2);
    if (order !== 'II' && order !== 'MM') return undefined;
    const le = order === 'II';
    const u16 = (b: Buffer, o: number) => (le ? b.readUInt16LE(o) : b.readUInt16BE(o));
    const u32 = (b: Buffer, o: number) => (le ? b.readUInt32LE(o) : b.readUInt32BE(o));
    if (u16(h, 2) !== 42) return undefined;
    let ifd = u32(h, 4);
    const seen = new Set<number>();
    for (let p = 0; p < page; p++) {
      if (seen.has(ifd)) return undefined;
      seen.add(ifd);
      const n = u16(await read(ifd, 2), 0);
      ifd = u32(await read(ifd + 2 + 12 * n, 4), 0);
      if (ifd === 0) return undefined;
    }
    const count = u16(await read(ifd, 2), 0);
    if (count === 0 || count > 4096) return undefined;
    const entries = await read(ifd + 2, 12 * count);
    const facts: TiffFacts = { samplesPerPixel: 1, bitsPerSample: [1], sampleFormat: [1] };
    for (let i = 0; i < count; i++) {
      const e = 12 * i;
      const tag = u16(entries, e);
      if (tag !== 258 && tag !== 262 && tag !== 274 && tag !== 277 && tag !== 339) continue;
      const type = u16(entries, e + 2);
      const n = Math.min(u32(entries, e + 4), 64);
      const width = type === 3 ? 2 : type === 4 ? 4 : type === 1 ? 1 : 0;
      if (width === 0 || n === 0) continue;
      const data =
        n * width <= 4 ? entries.subarray(e + 8, e + 12) : await read(u32(entries, e + 8), n * width);
      const values = Array.from({ length: n }, (_, k) =>
        width === 2 ? u16(data, 2 * k) : width === 4 ? u32(data, 4 * k) : data[k],
      );
      if (tag === 258) facts.bitsPerSample = values;
      else if (tag === 262) facts.photometric = values[0];
      else if (tag === 274) facts.orientation = values[0];
      else if (tag === 277) facts.samplesPerPixel = values[0];
      else facts.sampleFormat = values;
    }
    return facts;
  } finally {
    await fh.close();
  }
}
