/**
 * Typed element binding: `bind(root, { rank: 'input#rank', stage: '#stage' })` returns
 * `{ rank: HTMLInputElement; stage: HTMLElement }`. The element type is read from the tag that opens the
 * selector's last compound (`input#rank` → HTMLInputElement, `#readouts dd` → HTMLElement), which is the
 * tag querySelector itself requires, so the type holds at run time. Missing elements throw one error
 * naming their selectors (./elements.ts).
 */
import { resolveAll } from './elements';

/** The last compound selector: `#stack-card [data-metric="frame"] dd` → `dd`. */
type LastCompound<S extends string> = S extends `${string} ${infer R}` ? LastCompound<R> : S;
type Before<S extends string, C extends string> = S extends `${infer T}${C}${string}` ? T : S;
/** The tag a compound selector names, '' when it names none: `input#rank` → `input`. */
type TagOf<S extends string> = Before<Before<Before<Before<LastCompound<S>, '#'>, '.'>, '['>, ':'>;

/** The element a selector matches: the tag's own interface, else HTMLElement. */
export type ElementOf<S extends string> =
  Lowercase<TagOf<S>> extends keyof HTMLElementTagNameMap
    ? HTMLElementTagNameMap[Lowercase<TagOf<S>>]
    : HTMLElement;

export type Bound<S extends Record<string, string>> = { [K in keyof S]: ElementOf<S[K]> };

/** One typed element per named selector under `root` (the document or an element). */
export function bind<const S extends Record<string, string>>(
  root: ParentNode,
  spec: S,
  where?: string,
): Bound<S> {
  return resolveAll((selector) => root.querySelector(selector), spec, where) as Bound<S>;
}

/** The one element `selector` matches under `root`. */
export function find<const S extends string>(root: ParentNode, selector: S, where?: string): ElementOf<S> {
  return bind(root, { element: selector }, where).element;
}

// Compile-time checks of ElementOf: the renderer's type-check fails if one of these stops holding.
type Same<A, B> = [A] extends [B] ? ([B] extends [A] ? true : false) : false;
type Holds<T extends true[]> = T;
type _ElementOfChecks = Holds<
  [
    Same<ElementOf<'input#rank'>, HTMLInputElement>,
    Same<ElementOf<'#stage'>, HTMLElement>,
    Same<ElementOf<'canvas.left'>, HTMLCanvasElement>,
    Same<ElementOf<'input[name="tiling"]:checked'>, HTMLInputElement>,
    Same<ElementOf<'#status progress#status-progress'>, HTMLProgressElement>,
    Same<ElementOf<'#readouts [data-metric="psnr"]'>, HTMLElement>,
    Same<ElementOf<'SELECT#tile-size'>, HTMLSelectElement>,
  ]
>;
