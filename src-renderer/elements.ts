/**
 * Finding the page's elements by selector, without the DOM (the typed front end is ./bind.ts): every
 * selector is queried, and one error names all that matched nothing, so a renamed id in index.html
 * fails at start-up with its selector instead of a `null` deep inside a handler.
 */

/** Runs one selector against some root; `null` when nothing matches. */
export type Query<E> = (selector: string) => E | null;

/**
 * One element per named selector.
 * @throws Error "<where> has no element for rank (input#rank), …" listing every selector that matched nothing.
 * @example resolveAll((s) => document.querySelector(s), { rank: 'input#rank' }).rank
 */
export function resolveAll<K extends string, E>(
  query: Query<E>,
  spec: Record<K, string>,
  where = 'The page',
): Record<K, E> {
  const found = {} as Record<K, E>;
  const missing: string[] = [];
  for (const key of Object.keys(spec) as K[]) {
    const el = query(spec[key]);
    if (el === null || el === undefined) missing.push(`${key} (${spec[key]})`);
    else found[key] = el;
  }
  if (missing.length) throw new Error(`${where} has no element for ${missing.join(', ')}`);
  return found;
}
