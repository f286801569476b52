/**
 * Small predicates and one error format for every public argument, after sharp's lib/is.js habit:
 * `Expected integer between 1 and 4096 for rank but received 0 of type number`.
 * Tests assert the exact text.
 */
import { displayName, MAX_SHOWN_NAME, UsageError } from './errors';

export const is = {
  defined: (v: unknown): boolean => v !== undefined && v !== null,
  number: (v: unknown): v is number => typeof v === 'number' && Number.isFinite(v),
  integer: (v: unknown): v is number => Number.isInteger(v),
  inRange: (v: number, lo: number, hi: number): boolean => v >= lo && v <= hi,
  string: (v: unknown): v is string => typeof v === 'string',
  bool: (v: unknown): v is boolean => typeof v === 'boolean',
  plainObject: (v: unknown): v is Record<string, unknown> =>
    typeof v === 'object' && v !== null && !Array.isArray(v) && Object.getPrototypeOf(v) === Object.prototype,
  oneOf: <T>(v: unknown, values: readonly T[]): v is T => values.includes(v as T),
};

function describe(v: unknown): string {
  // A long string (a 4,000-character path) is shortened, not echoed whole: see displayName.
  if (typeof v === 'string')
    return `${JSON.stringify(v.length > MAX_SHOWN_NAME ? displayName(v) : v)} of type string`;
  if (v === null) return 'null';
  if (v === undefined) return 'undefined';
  if (Array.isArray(v)) return 'an array';
  return `${String(v)} of type ${typeof v}`;
}

/** The one error format: `Expected <expected> for <name> but received <value> of type <type>`. */
export function invalidParameterError(name: string, expected: string, actual: unknown): UsageError {
  return new UsageError(`Expected ${expected} for ${name} but received ${describe(actual)}`, {
    parameter: name,
  });
}

export function checkInteger(name: string, v: unknown, lo: number, hi: number): number {
  if (!is.integer(v) || !is.inRange(v, lo, hi))
    throw invalidParameterError(name, `integer between ${lo} and ${hi}`, v);
  return v;
}

export function checkOneOf<T extends string>(name: string, v: unknown, values: readonly T[]): T {
  if (!is.oneOf(v, values))
    throw invalidParameterError(
      name,
      values.length === 2 ? `${values[0]} or ${values[1]}` : `one of ${values.join(', ')}`,
      v,
    );
  return v as T;
}

export function checkString(name: string, v: unknown, maxLength = 4096): string {
  if (!is.string(v) || v.length === 0 || v.length > maxLength)
    throw invalidParameterError(name, `non-empty string of at most ${maxLength} characters`, v);
  return v;
}

export function checkBool(name: string, v: unknown): boolean {
  if (!is.bool(v)) throw invalidParameterError(name, 'boolean', v);
  return v;
}
