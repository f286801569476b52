import { type ParseArgsConfig, parseArgs } from 'node:util';
import { UsageError } from '../../../contract';
import type { EarlyStart } from './early-start';

/** Where a command writes. Tests pass their own; the CLI passes process streams. */
export interface CliIO {
  stdout: (text: string) => void;
  stderr: (text: string) => void;
  /** True when stderr is a terminal, so live progress may be drawn. */
  isTTY: boolean;
}

/** One `rankfold <name>` sub-command. `run` returns the exit code. */
export interface Command {
  name: string;
  summary: string;
  /** Full help text, printed by `rankfold <name> --help`. */
  help: string;
  /** The help for these arguments when it depends on them (`compress --stack --help`); else `help`. */
  helpFor?(argv: string[]): Promise<string>;
  /** `early`: what the CLI entry started for this command before loading it (see ./early-start.ts). */
  run(argv: string[], io: CliIO, early?: EarlyStart): Promise<number>;
}

export type OptionSpec = NonNullable<ParseArgsConfig['options']>;

/**
 * A command's parseArgs declarations from its flags, without dashes: `values` take a value (`--page N`;
 * the contract's declarations in OPTIONS give the same names), `switches` take none. `output` also
 * answers to -o.
 */
export function flags(values: string, switches = ''): OptionSpec {
  const spec: OptionSpec = {};
  for (const name of values.split(' ').filter(Boolean))
    spec[name] = name === 'output' ? { type: 'string', short: 'o' } : { type: 'string' };
  for (const name of switches.split(' ').filter(Boolean)) spec[name] = { type: 'boolean' };
  return spec;
}

/**
 * Parse a command's arguments with node:util parseArgs, turning its errors into a UsageError that
 * names the command and points at its help.
 */
export function parseCommandArgs(command: string, argv: string[], options: OptionSpec, maxPositionals = 1) {
  let parsed: ReturnType<
    typeof parseArgs<{ options: OptionSpec; allowPositionals: true; strict: true; args: string[] }>
  >;
  try {
    parsed = parseArgs({
      args: argv,
      options: { ...options, help: { type: 'boolean', short: 'h' } },
      allowPositionals: true,
      strict: true,
    });
  } catch (err) {
    const msg =
      err instanceof Error ? err.message.replace(/\. To specify a positional argument.*$/s, '') : String(err);
    throw new UsageError(`${command}: ${msg}. See \`rankfold ${command} --help\`.`);
  }
  if (parsed.positionals.length > maxPositionals)
    throw new UsageError(
      `${command}: too many arguments (${parsed.positionals.slice(maxPositionals).join(' ')}). See \`rankfold ${command} --help\`.`,
    );
  return {
    values: parsed.values as Record<string, string | boolean | string[] | undefined>,
    positionals: parsed.positionals,
  };
}
