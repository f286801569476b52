// The page's locale guard: values Intl refuses become a usable tag, valid tags pass untouched.
// Reference: ECMA-402 §9.2.1 CanonicalizeLocaleList throws a RangeError for a string that is not a
// well-formed BCP 47 tag (RFC 5646 §2.1); "en-US@posix" is a POSIX locale name, not a tag.
import { describe, expect, it } from 'vitest';
import { usableLanguage } from '../../src-renderer/locale-guard';

describe('usableLanguage', () => {
  it('a POSIX locale name, which Intl.NumberFormat refuses, becomes its leading tag', () => {
    expect(() => new Intl.NumberFormat('en-US@posix')).toThrow(RangeError);
    expect(usableLanguage('en-US@posix')).toBe('en-US');
    expect(usableLanguage('de_DE.UTF-8')).toBe('de-DE');
  });

  it('valid tags are kept, and nothing usable falls back to en-US', () => {
    for (const tag of ['en-US', 'fr', 'de-CH', 'sr-Latn-RS']) expect(usableLanguage(tag)).toBe(tag);
    expect(usableLanguage(undefined)).toBe('en-US');
    expect(usableLanguage('@@@')).toBe('en-US');
  });
});
