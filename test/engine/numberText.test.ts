/**
 * engine/numberText.ts: which texts are numbers (the convention the cells and the command line
 * share), which look like numbers in another convention, which look like dates.
 */
import fc from "fast-check";
import { numberFromText, numberTextHint, readNumberText } from "../../engine/numberText";

describe("readNumberText", () => {
  test.each([
    ["12", 12],
    [" 12 ", 12],
    ["\u00a012\u00a0", 12], // no-break spaces around, as a web page leaves them
    ["-0.5", -0.5],
    ["+7", 7],
    [".5", 0.5],
    ["3.", 3],
    ["1e-3", 0.001],
    ["2.5E+4", 25000],
    ["0.907246", 0.907246],
    ["1,234", 1234],
    ["1,234.5", 1234.5],
    ["-12,345,678.25", -12345678.25],
  ])("%j is the number %d (from memory: the decimal value written)", (text, value) => {
    expect(readNumberText(text)).toMatchObject({ kind: "number", value });
    expect(numberFromText(text)).toBe(value);
  });

  test("grouping is reported, so a note can say how ',' was read", () => {
    expect(readNumberText("1,234")).toEqual({ kind: "number", value: 1234, grouped: true });
    expect(readNumberText("1234")).toEqual({ kind: "number", value: 1234, grouped: false });
  });

  test.each(["0,5", "12,75", "1.234,5", "1.234.567", "12 345", "12\u202f345,5", "1'234.5", "1,5e3", "1,23"])(
    "%j looks like a number in another convention",
    (text) => {
      expect(readNumberText(text)).toEqual({ kind: "foreign" });
    },
  );

  test.each(["2024-02-01", "2024-02-01T10:30", "2024-2-1 08:15:00", "2024/02/01", "01/02/2024", "1.2.2024", "1-2-24", "1 Feb 2024", "01-feb-24", "Feb 1, 2024", "September 30 2023"])(
    "%j looks like a date",
    (text) => {
      expect(readNumberText(text)).toEqual({ kind: "date" });
    },
  );

  test.each(["North", "n/a", "", "0x10", "Infinity", "NaN", "$12", "12%", "(12)", "12,3456.7", "1.2.3", "--1", "1e"])("%j is text", (text) => {
    expect(readNumberText(text)).toEqual({ kind: "text" });
    expect(numberFromText(text)).toBeNull();
  });

  test("numbers too large for a double are not numbers", () => {
    expect(readNumberText("1e400")).toEqual({ kind: "too-large" });
  });

  test("property: every finite double written by String() reads back as itself, spaces around or not", () => {
    // Reference: ECMAScript Number.prototype.toString writes the shortest text that reads back as the same double.
    fc.assert(
      fc.property(fc.double({ noNaN: true, noDefaultInfinity: true }), fc.constantFrom("", " ", "  ", "\t"), (x, pad) => {
        const value = numberFromText(`${pad}${String(x)}${pad}`);
        expect(value).toBe(x === 0 ? 0 : x); // -0 is written "0"
      }),
      { numRuns: 500, seed: 8 },
    );
  });

  test("property: numbers grouped by Intl.NumberFormat (en-US) read back as the same number", () => {
    // Reference: Intl.NumberFormat groups thousands with ',' and writes '.' decimals in en-US, independently of our pattern.
    const format = new Intl.NumberFormat("en-US", { maximumFractionDigits: 3, useGrouping: true });
    fc.assert(
      fc.property(fc.integer({ min: -1e12, max: 1e12 }), (k) => {
        const x = k / 1000;
        expect(numberFromText(format.format(x))).toBe(x);
      }),
      { numRuns: 500, seed: 8 },
    );
  });
});

describe("numberTextHint", () => {
  test("each kind gets its hint; ordinary text none", () => {
    expect(numberTextHint("12")).toBe(" (a number stored as text?)");
    expect(numberTextHint("0,5")).toBe(
      " (a decimal comma or another digit grouping? numbers are read with '.' as the decimal point and ',' between groups of three digits)",
    );
    expect(numberTextHint("2024-02-01")).toBe(" (a date stored as text? convert it to a real date, which is a number to Excel)");
    expect(numberTextHint("2024-02-01", "file")).toBe(
      " (a date? the command line reads numbers only: write dates as numbers, such as days since a start date)",
    );
    expect(numberTextHint("1e400")).toBe(" (a number too large to use)");
    expect(numberTextHint("North")).toBe("");
  });
});
