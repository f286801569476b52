/**
 * `--resume` without a matching manifest row: trust an existing output only if its .rkf header (read and
 * CRC-checked by the codec's own container reader) records the same source SHA-256 as the decoded input.
 */
import { readFile, stat } from 'node:fs/promises';
import type { CompressOptions, DecodedImage } from '../../contract';
import { readImageHeader } from '../../engine/codec/image-file';
import type { KeptOutput } from './job';

/** Returns what the header says when the output matches the input, or undefined (compress again). */
export async function verifyByHeader(
  input: string,
  output: string,
  options: CompressOptions,
  decode: (file: string, o: { page?: number; pixelLimit?: number }) => Promise<DecodedImage>,
): Promise<KeptOutput | undefined> {
  let header: ReturnType<typeof readImageHeader>['header'];
  let bytes: number;
  try {
    const buf = new Uint8Array(await readFile(output));
    bytes = (await stat(output)).size;
    header = readImageHeader(buf, output).header;
  } catch {
    return undefined; // unreadable or damaged: it is rewritten
  }
  const decoded = await decode(input, { page: options.page, pixelLimit: options.pixelLimit });
  if (decoded.sourceSha256 !== header.sourceSha256) return undefined;
  return {
    sourceSha256: header.sourceSha256,
    width: header.width,
    height: header.height,
    channels: header.channels,
    bitDepth: header.bitDepth,
    bytes,
    rawBytes: decoded.rawBytes,
    inputBytes: decoded.inputBytes,
  };
}
