/**
 * `rankfold expand STACK.rkf (--frame I -o OUT.png | -o OUT_DIR | -o OUT.tif)`: decode one frame of a
 * stack container without decoding the others, or all frames into a folder of numbered PNG files or
 * one multi-page TIFF. Called by expand.ts for `--frame` and for files with the stack layout.
 */
import {
  LOSSY_CAUTION,
  OPTIONS,
  parseOptionText,
  type StackExpandReport,
  UsageError,
} from '../../../contract';
import { expandStackFile, isStackFile } from '../../services/stack';
import { type CliIO, flags, parseCommandArgs } from '../args/command';

const options = flags('output frame pixel-limit', 'json force upright');

export const expandStackHelp = `Stack files (made by compress --stack):
  rankfold expand SERIES.rkf --frame I -o OUT.png|OUT.tif   frame I (counted from 1), decoded on its own
  rankfold expand SERIES.rkf -o OUT_DIR                     every frame as OUT_DIR/frame-001.png, …
  rankfold expand SERIES.rkf -o OUT.tif                     every frame as one multi-page TIFF
`;

/** True when expand.ts should hand `argv` to {@link runStack}: --frame, or an input with the stack layout. */
export async function wantsStack(argv: string[]): Promise<boolean> {
  if (argv.includes('--frame') || argv.some((a) => a.startsWith('--frame='))) return true;
  const input = argv.find(
    (a, i) => !a.startsWith('-') && !(i > 0 && /^(-o|--output|--pixel-limit)$/.test(argv[i - 1])),
  );
  return input !== undefined && /\.rkf$/i.test(input) && (await isStackFile(input));
}

function format(r: StackExpandReport): string {
  const head = `${r.input} → ${r.outputs.length === 1 ? r.outputs[0] : `${r.outputs.length} files in ${r.outputs[0].replace(/[/\\][^/\\]*$/, '')}`}`;
  return [
    `${head} (${r.format.toUpperCase()}, ${r.frames.length} frame(s) of ${r.width}×${r.height}, ${r.channels === 3 ? 'colour' : 'gray'}, ${r.bitDepth}-bit)`,
    '  lossy: the samples differ from the sources; the source SHA-256 of each frame is kept in the file (--json)',
    '',
  ].join('\n');
}

/** Entry from expand.ts. Returns the exit code. */
export async function runStack(argv: string[], io: CliIO): Promise<number> {
  const { values: v, positionals } = parseCommandArgs('expand', argv, options);
  const input = positionals[0];
  if (!input) throw new UsageError('expand: missing input .rkf file. See `rankfold expand --help`.');
  const output = v.output as string | undefined;
  if (!output)
    throw new UsageError('expand: missing -o OUT.png, OUT.tif or OUT_DIR. See `rankfold expand --help`.');
  // Frames are counted from 1 on the command line, in the reports and in the app; the service takes an index.
  const frame =
    v.frame !== undefined ? parseOptionText(OPTIONS.frameNumber, v.frame as string) - 1 : undefined;
  const report = await expandStackFile(input, output, { frame, force: Boolean(v.force) });
  io.stdout(v.json ? `${JSON.stringify(report)}\n` : format(report));
  if (!v.json) io.stderr(`${LOSSY_CAUTION}\n`);
  return 0;
}
