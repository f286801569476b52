/**
 * An upload: a file the user picked in the page, sent as a name and its bytes. One validator for both
 * transports (IPC sends `{ name, bytes }`; HTTP sends the name in `?name=` and the bytes as the body).
 */
import { displayName, UsageError } from './errors';
import { utf8Encode } from './utf8';
import { is } from './validate';

/** File types Rankfold opens as scans. */
export const SCAN_EXTENSIONS: readonly string[] = ['.png', '.tif', '.tiff', '.jpg', '.jpeg', '.webp'];
/** Largest upload accepted from the page: 2 GiB, above any single scan the decoder's pixel limit allows at 8 bits. */
export const MAX_UPLOAD_BYTES = 2 * 1024 ** 3;
/** Longest upload name in UTF-8 bytes: NAME_MAX of common Linux, macOS and Windows file systems (from memory). */
const MAX_UPLOAD_NAME_BYTES = 255;

export interface UploadRequest {
  name: string;
  bytes: Uint8Array;
}

/** True when `s` holds a C0 control character, DEL or (with `c1`) a C1 control character. */
export function hasControl(s: string, c1 = false): boolean {
  for (let i = 0; i < s.length; i++) {
    const c = s.charCodeAt(i);
    if (c < 0x20 || c === 0x7f || (c1 && c >= 0x80 && c <= 0x9f)) return true;
  }
  return false;
}

/** Lower-case extension with its dot, or ''. */
function extensionOf(name: string): string {
  const dot = name.lastIndexOf('.');
  return dot > 0 ? name.slice(dot).toLowerCase() : '';
}

/**
 * A plain file name of a scan: not empty, not `.` or `..`, no `/` or `\`, no NUL or other control
 * characters, at most 255 UTF-8 bytes, and a scan extension. @throws UsageError naming the problem.
 */
export function checkUploadName(name: unknown): string {
  if (!is.string(name) || name === '')
    throw new UsageError('Upload name is empty; send the file name in ?name=');
  const shown = JSON.stringify(name.length > 80 ? `${name.slice(0, 80)}…` : name);
  if (name === '.' || name === '..') throw new UsageError(`Upload name ${shown} is not a file name`);
  if (/[/\\]/.test(name))
    throw new UsageError(`Upload name ${shown} contains a folder separator; send the file name alone`);
  if (hasControl(name, true))
    throw new UsageError(`Upload name ${shown} contains a NUL or other control character`);
  if (utf8Encode(name).length > MAX_UPLOAD_NAME_BYTES)
    throw new UsageError(`Upload name ${shown} is longer than ${MAX_UPLOAD_NAME_BYTES} bytes`);
  if (!SCAN_EXTENSIONS.includes(extensionOf(name)))
    throw new UsageError(
      `${displayName(name)}: is not a scan Rankfold reads (${SCAN_EXTENSIONS.join(', ')})`,
    );
  return name;
}

/** Check an upload request. @throws UsageError */
export function checkUpload(v: unknown): UploadRequest {
  if (!is.plainObject(v)) throw new UsageError('Upload needs a file name and its bytes');
  const name = checkUploadName(v.name);
  const b = v.bytes;
  if (!(b instanceof Uint8Array) && !(b instanceof ArrayBuffer))
    throw new UsageError('Upload needs the file bytes');
  const bytes = b instanceof ArrayBuffer ? new Uint8Array(b) : b;
  if (bytes.byteLength > MAX_UPLOAD_BYTES)
    throw new UsageError(
      `Upload of ${bytes.byteLength} bytes is over the limit of ${MAX_UPLOAD_BYTES} bytes`,
    );
  return { name, bytes };
}
