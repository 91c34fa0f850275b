/**
 * How the text of one CSV field is read. These rules are shared by training ingest
 * and prediction-time reading, so a value means the same thing at both times.
 */

/**
 * True for the spellings of a missing value: the empty field, `?`, and `NA`, `NaN`, `null`
 * in any letter case. `text` must already be trimmed.
 */
export function isMissingSpelling(text: string): boolean {
  // Dispatch on length first: most fields are longer than 4 characters and leave at once.
  switch (text.length) {
    case 0:
      return true;
    case 1:
      return text === "?";
    case 2:
      return (text.charCodeAt(0) | 32) === 110 && (text.charCodeAt(1) | 32) === 97;
    case 3:
      return (
        (text.charCodeAt(0) | 32) === 110 && (text.charCodeAt(1) | 32) === 97 && (text.charCodeAt(2) | 32) === 110
      );
    case 4:
      return text.toLowerCase() === "null";
    default:
      return false;
  }
}

/** Removes surrounding whitespace, paying for `trim()` only when there is some. */
export function trimField(text: string): string {
  const last = text.length - 1;
  if (last < 0) return text;
  return text.charCodeAt(0) <= 32 || text.charCodeAt(last) <= 32 ? text.trim() : text;
}

/** Exact powers of ten as doubles (10^22 is the largest one a double holds exactly). */
const POWERS_OF_TEN = Array.from({ length: 23 }, (_, e) => Number(`1e${e}`));
const EXACT_INTEGER_LIMIT = 2 ** 53;

/**
 * The number a non-missing field holds, or NaN when it is not a decimal number (or has
 * surrounding whitespace: trim first).
 * Accepts what `Number()` accepts (signs, exponents, `Infinity`) except JavaScript's
 * hexadecimal, binary and octal literals, which in a data file are identifiers, not numbers.
 *
 * Plain decimals (`-12.375`) take a fast path: the digits as an integer m below 2^53 and
 * s ≤ 22 fraction digits give m / 10^s, a single correctly rounded division of two exact
 * doubles, hence the same double as `Number()` (Clinger 1990, "How to read floating point
 * numbers accurately", the fast path). Everything else goes to `Number()`.
 */
export function parseNumericField(text: string): number {
  const length = text.length;
  let i = 0;
  const sign = text.charCodeAt(0);
  const negative = sign === 45;
  if (negative || sign === 43) i = 1;
  let mantissa = 0;
  let digits = 0;
  let scale = 0;
  for (; i < length; i++) {
    const digit = text.charCodeAt(i) - 48;
    if (digit < 0 || digit > 9) break;
    mantissa = mantissa * 10 + digit;
    digits++;
  }
  if (i < length && text.charCodeAt(i) === 46) {
    for (i++; i < length; i++) {
      const digit = text.charCodeAt(i) - 48;
      if (digit < 0 || digit > 9) break;
      mantissa = mantissa * 10 + digit;
      digits++;
      scale++;
    }
  }
  if (i === length && digits > 0 && mantissa <= EXACT_INTEGER_LIMIT && scale <= 22) {
    const value = scale === 0 ? mantissa : mantissa / POWERS_OF_TEN[scale];
    return negative ? -value : value;
  }
  return parseOtherNumber(text);
}

function parseOtherNumber(text: string): number {
  const first = text.charCodeAt(0);
  // Number() ignores surrounding whitespace; callers trim first, so whitespace here means untrimmed text.
  if (text.charCodeAt(text.length - 1) <= 32) return NaN;
  // A decimal number starts with a digit, a sign, a point or the I of Infinity; anything
  // else is text, and rejecting it here keeps categorical columns cheap.
  if (!((first >= 48 && first <= 57) || first === 45 || first === 43 || first === 46 || first === 73)) return NaN;
  if (first === 48 && text.length > 2) {
    const radix = text.charCodeAt(1) | 32;
    if (radix === 120 || radix === 98 || radix === 111) return NaN;
  }
  return Number(text);
}

/** 1 for true/yes, 0 for false/no (any letter case), NaN for anything else. 0 and 1 are numbers, not booleans. */
export function parseBooleanField(text: string): number {
  if (text.length < 2 || text.length > 5) return NaN;
  switch (text.toLowerCase()) {
    case "true":
    case "yes":
      return 1;
    case "false":
    case "no":
      return 0;
    default:
      return NaN;
  }
}
