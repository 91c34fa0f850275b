import fc from "fast-check";
import { describe, expect, it } from "vitest";
import { isMissingSpelling, parseBooleanField, parseNumericField } from "../src/csv/field-values.js";

describe("reading one field", () => {
  it("reads decimal text to exactly the double Number() gives", () => {
    const decimal = fc
      .tuple(fc.constantFrom("", "-", "+"), fc.stringMatching(/^[0-9]{1,19}$/), fc.option(fc.stringMatching(/^[0-9]{0,24}$/)))
      .map(([sign, whole, fraction]) => `${sign}${whole}${fraction === null ? "" : `.${fraction}`}`);
    fc.assert(
      fc.property(decimal, (text) => {
        expect(Object.is(parseNumericField(text), Number(text))).toBe(true);
      }),
      { numRuns: 5000 },
    );
    for (const text of ["0.1", "-0", "-0.0", "9007199254740993", "0.30000000000000004", "123456789012345678901234", ".5", "5.", "+.25"]) {
      expect(Object.is(parseNumericField(text), Number(text))).toBe(true);
    }
  });

  it("reads exponents and infinities, and refuses hex, binary, octal and other text", () => {
    expect(parseNumericField("1.5e3")).toBe(1500);
    expect(parseNumericField("-2E-2")).toBe(-0.02);
    expect(parseNumericField("Infinity")).toBe(Infinity);
    expect(parseNumericField("-Infinity")).toBe(-Infinity);
    for (const text of ["0x1A", "0b101", "0o17", "1,5", "1_000", "12abc", ".", "-", "e5", "abc", "١٢"]) {
      expect(parseNumericField(text)).toBeNaN();
    }
  });

  it("knows the missing and boolean spellings", () => {
    for (const text of ["", "?", "NA", "na", "Na", "NaN", "nan", "NAN", "null", "NULL", "Null"]) expect(isMissingSpelling(text)).toBe(true);
    for (const text of ["N/A", "none", "0", "-", "nil", "NAs"]) expect(isMissingSpelling(text)).toBe(false);
    expect(["true", "TRUE", "Yes", "yes"].map(parseBooleanField)).toEqual([1, 1, 1, 1]);
    expect(["false", "False", "NO", "no"].map(parseBooleanField)).toEqual([0, 0, 0, 0]);
    for (const text of ["0", "1", "y", "n", "t", "f", "on"]) expect(parseBooleanField(text)).toBeNaN();
  });
});
