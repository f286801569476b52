/** `rankfold expand IN.rkf -o OUT.png|OUT.tif`: decode a container back to PNG or TIFF. */
import {
  type ExpandReport,
  LOSSY_CAUTION,
  OPTIONS,
  OutputError,
  parseOptionText,
  UsageError,
} from '../../../contract';
import { expandFile } from '../../services/expand';
import { containerDamage } from '../../services/stack';
import { type CliIO, type Command, flags, parseCommandArgs } from '../args/command';

const options = flags('output pixel-limit frame', 'json force upright');

const help = `Usage: rankfold expand IN.rkf -o OUT.png|OUT.tif [--json] [--force]

Decode a Rankfold container back to PNG or TIFF, at the bit depth of the source (8 or 16), with its
ICC profile, resolution (DPI) and orientation restored. The whole file is validated first (every
chunk's CRC-32, the version, the dimensions); a damaged file is refused and nothing is written.
When the container was lossless, the decoded samples are checked against the stored SHA-256 of the source.

Options:
  -o, --output FILE   .png, .tif or .tiff (required)
  --upright           write upright pixels without an orientation tag (default: restore the source's layout and tag)
  --pixel-limit N     refuse containers declaring more pixels than N (default 268402689)
  --frame I           one frame of a stack container
  --json              print the report as one JSON object
  --force             overwrite an existing output

${LOSSY_CAUTION}
`;

function formatReport(r: ExpandReport): string {
  return [
    `${r.input} → ${r.output} (${r.format.toUpperCase()}, ${r.width}×${r.height}, ${r.channels} channel(s), ${r.bitDepth}-bit, ${r.outputBytes} B)`,
    `  metadata: ICC ${r.metadata.icc ? 'restored' : 'none'}, DPI ${r.metadata.density ?? 'none'}, orientation ${r.metadata.orientation ?? 'none'}`,
    r.hashChecked
      ? `  lossless: the samples match the stored source SHA-256 ${r.sourceSha256}`
      : '  lossy: the samples differ from the source (see the PSNR/SSIM reported by compress)',
    '',
  ].join('\n');
}

export const command: Command = {
  name: 'expand',
  summary: 'decode a .rkf file back to PNG or TIFF',
  help,
  async run(argv, io) {
    if (argv.includes('--frame') || argv.some((a) => a.startsWith('--frame='))) {
      const mod = (await import('./expand-stack')) as {
        runStack(argv: string[], io: CliIO): Promise<number>;
      };
      return mod.runStack(argv, io);
    }
    // Stack-layout files without --frame expand all frames (stack mode's addition).
    const stack = await import('./expand-stack');
    if (await stack.wantsStack(argv)) return stack.runStack(argv, io);
    const { values: v, positionals } = parseCommandArgs('expand', argv, options);
    const input = positionals[0];
    if (!input) throw new UsageError('expand: missing input .rkf file. See `rankfold expand --help`.');
    const output = v.output as string | undefined;
    if (!output) throw new UsageError('expand: missing -o OUT.png or OUT.tif. See `rankfold expand --help`.');
    const pixelLimit =
      v['pixel-limit'] !== undefined
        ? parseOptionText(OPTIONS.pixelLimit, v['pixel-limit'] as string)
        : undefined;
    let report: ExpandReport;
    try {
      report = await expandFile(input, output, {
        force: Boolean(v.force),
        pixelLimit,
        orientation: v.upright ? 'upright' : 'restore',
      });
    } catch (err) {
      // The output is checked before the input is read; a damaged input is the more useful report.
      if (err instanceof UsageError || err instanceof OutputError)
        throw (await containerDamage(input)) ?? err;
      throw err;
    }
    // expandFile's report may carry warnings (stored metadata left out); see services/expand.ts.
    for (const w of (report as { warnings?: string[] }).warnings ?? []) io.stderr(`warning: ${w}\n`);
    if (v.json)
      io.stdout(`${JSON.stringify({ ...report, caution: report.lossless ? undefined : LOSSY_CAUTION })}\n`);
    else io.stdout(formatReport(report) + (report.lossless ? '' : `${LOSSY_CAUTION}\n`));
    return 0;
  },
};
