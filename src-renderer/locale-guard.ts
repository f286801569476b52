/**
 * Imported first by the page, before the chart library. uPlot builds its number formatter from
 * `navigator.language` when its module loads, and `Intl.NumberFormat` throws a RangeError for a value
 * that is not a BCP 47 language tag (ECMA-402 §9.2.1 CanonicalizeLocaleList). Some browsers report the
 * POSIX locale of the process as is, e.g. "en-US@posix" under LANG=C.UTF-8, and the page would then
 * never start. Such a value is replaced by its valid leading part, or by "en-US".
 */

/** The language tag to use for number formatting: `lang` when Intl accepts it, else a usable one. */
export function usableLanguage(lang: string | undefined): string {
  const ok = (tag: string) => {
    try {
      new Intl.NumberFormat(tag);
      return true;
    } catch {
      return false;
    }
  };
  if (lang && ok(lang)) return lang;
  const head = lang?.split(/[@.]/)[0].replace(/_/g, '-');
  return head && ok(head) ? head : 'en-US';
}

// Reached through globalThis so the module also type-checks (and its function is tested) without the DOM.
const nav = (globalThis as { navigator?: { language?: string } }).navigator;
if (nav) {
  const lang = usableLanguage(nav.language);
  if (lang !== nav.language) Object.defineProperty(nav, 'language', { value: lang, configurable: true });
}
