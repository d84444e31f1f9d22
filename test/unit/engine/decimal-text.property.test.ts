/**
 * The character-code decimal check CSV values go through (isDecimalText, libs/engine/reading.ts)
 * against the regular expression it replaced, kept here verbatim as the reference, over random
 * number-like cells, edited ones and arbitrary strings (white space of ECMA-262 `\s` included).
 */
import { describe, expect, it } from 'vitest';
import fc from 'fast-check';
import { isDecimalText } from '../../../libs/engine/reading.js';

/** Reference: the rule CSV values followed before the character scan. */
const referenceDecimal = (text: string): boolean =>
  /^\s*[-+]?(\d+\.?\d*|\.\d+)([eE][-+]?\d+)?\s*$/.test(text);

const space = fc.constantFrom(
  '',
  ' ',
  '\t',
  '\n',
  '\r',
  '\u00a0',
  '\u2003',
  '\ufeff',
  '\u2028',
  '\u0001',
  '\u0085',
);
const digits = fc.stringMatching(/^[0-9]{0,6}$/);
const numberLike = fc
  .record({
    before: space,
    sign: fc.constantFrom('', '+', '-', '--', '+-'),
    integer: digits,
    dot: fc.constantFrom('', '.', '..', ','),
    fraction: digits,
    exponent: fc.constantFrom('', 'e', 'E', 'e+', 'e-', 'E+', 'x'),
    exponentDigits: digits,
    after: space,
  })
  .map(
    (p) => `${p.before}${p.sign}${p.integer}${p.dot}${p.fraction}${p.exponent}${p.exponentDigits}${p.after}`,
  );

const edited = fc
  .tuple(numberLike, fc.nat(30), fc.constantFrom('', '0', '.', 'e', '-', '+', ' ', '\u0663', 'a', 'I'))
  .map(([text, at, insert]) => {
    const i = at % (text.length + 1);
    return text.slice(0, i) + insert + text.slice(i + (at % 2));
  });

describe('CSV value decimal check', () => {
  it('accepts exactly what the regular expression accepts', () => {
    fc.assert(
      fc.property(fc.oneof(numberLike, edited, fc.string({ maxLength: 20 })), (text) => {
        expect(isDecimalText(text)).toBe(referenceDecimal(text));
      }),
      { numRuns: 20_000 },
    );
  });

  it('keeps the documented cases', () => {
    for (const ok of ['1', '-1.5', '+.5', '1.', ' 2e-3 ', '7E+10', '\t42\n'])
      expect(isDecimalText(ok)).toBe(true);
    for (const bad of ['', ' ', '.', '-', 'e5', '1e', '1.2.3', 'inf', 'NaN', '0x10', '1_000', '١']) {
      expect(isDecimalText(bad)).toBe(false);
    }
  });
});
