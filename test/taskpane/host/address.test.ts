/**
 * A1 addresses (taskpane/host/address.ts). Expected values follow the spreadsheet convention for A1
 * references (common practice: columns A…Z, AA…, the last column XFD = 16384, the last row
 * 1048576; sheet names with spaces or punctuation quoted, an apostrophe inside doubled).
 */
import {
  cellName,
  cleanSheetName,
  columnLetters,
  columnNumber,
  contains,
  formatAddress,
  intersect,
  MAX_COLUMNS,
  MAX_ROWS,
  numberedName,
  offsetRange,
  parseAddress,
  quoteSheetName,
  rangeSize,
  spillArea,
  splitAreas,
} from "../../../taskpane/host/address";
import { SheetHostError } from "../../../taskpane/host/sheetHost";

describe("column letters and numbers", () => {
  test.each([
    ["A", 1],
    ["Z", 26],
    ["AA", 27],
    ["AZ", 52],
    ["BA", 53],
    ["ZZ", 702],
    ["AAA", 703],
    ["XFD", 16384],
  ])("%s is column %i (common practice: bijective base 26)", (letters, n) => {
    expect(columnNumber(letters)).toBe(n);
    expect(columnLetters(n)).toBe(letters);
    expect(columnNumber(letters.toLowerCase())).toBe(n);
  });

  test("round trip over the first thousand columns", () => {
    for (let n = 1; n <= 1000; n++) expect(columnNumber(columnLetters(n))).toBe(n);
  });

  test("past the last column, or not letters: a SheetHostError", () => {
    expect(() => columnNumber("XFE")).toThrow(SheetHostError);
    expect(() => columnNumber("A1")).toThrow(SheetHostError);
    expect(() => columnLetters(0)).toThrow(SheetHostError);
    expect(() => columnLetters(MAX_COLUMNS + 1)).toThrow(SheetHostError);
    expect(() => cellName(MAX_ROWS + 1, 1)).toThrow(SheetHostError);
  });
});

describe("parsing", () => {
  test("one cell, a rectangle, absolute markers ignored", () => {
    expect(parseAddress("B2")).toEqual({ sheet: null, top: 2, left: 2, bottom: 2, right: 2 });
    expect(parseAddress("$B$1:L121")).toEqual({ sheet: null, top: 1, left: 2, bottom: 121, right: 12 });
  });

  test("corners in any order give the same rectangle", () => {
    expect(parseAddress("L121:B1")).toEqual(parseAddress("B1:L121"));
    expect(parseAddress("L1:B121")).toEqual(parseAddress("B1:L121"));
  });

  test("sheet names: plain, quoted, with a doubled apostrophe", () => {
    expect(parseAddress("Data!A1").sheet).toBe("Data");
    expect(parseAddress("'Roast log'!M1:M121")).toEqual({ sheet: "Roast log", top: 1, left: 13, bottom: 121, right: 13 });
    expect(parseAddress("'Kim''s data'!A1").sheet).toBe("Kim's data");
  });

  test("whole columns and whole rows", () => {
    expect(parseAddress("B:L")).toEqual({ sheet: null, top: 1, left: 2, bottom: MAX_ROWS, right: 12, whole: "columns" });
    expect(parseAddress("Data!3:5")).toEqual({ sheet: "Data", top: 3, left: 1, bottom: 5, right: MAX_COLUMNS, whole: "rows" });
  });

  test.each(["", "B", "1", "A0", "A1:B", "A1:B2:C3", "Roast log!A1", "'Roast log'A1", "'Roast log!A1", "A1048577", "#REF!"])(
    "'%s' is refused with a message showing what an address looks like",
    (text) => {
      expect(() => parseAddress(text)).toThrow(SheetHostError);
    },
  );
});

describe("formatting", () => {
  test("round trips", () => {
    for (const text of ["B2", "B1:L121", "'Roast log'!M1:M121", "Data!A1:C3", "B:L", "3:5", "'Kim''s data'!A1", "'A1'!B2", "'R1C1'!B2"]) {
      expect(formatAddress(parseAddress(text))).toBe(text);
    }
  });

  test("a sheet name is quoted only when it must be", () => {
    expect(quoteSheetName("Data")).toBe("Data");
    expect(quoteSheetName("Data_2")).toBe("Data_2");
    expect(quoteSheetName("Roast log")).toBe("'Roast log'");
    expect(quoteSheetName("2024")).toBe("'2024'");
    expect(quoteSheetName("AB12")).toBe("'AB12'"); // reads as a cell
    expect(quoteSheetName("R")).toBe("'R'"); // reads as an R1C1 reference
  });

  test("without the sheet", () => {
    expect(formatAddress(parseAddress("'Roast log'!M1:M121"), false)).toBe("M1:M121");
  });
});

describe("arithmetic", () => {
  test("size and offset", () => {
    const range = parseAddress("B1:L121");
    expect(rangeSize(range)).toEqual({ rows: 121, columns: 11 });
    expect(formatAddress(offsetRange(range, 2, 1))).toBe("C3:M123");
    expect(() => offsetRange(range, -1, 0)).toThrow(SheetHostError);
  });

  test("spill area of an r × c result at a cell (anchor included)", () => {
    expect(formatAddress(spillArea(parseAddress("'Roast log'!O1"), 14, 2))).toBe("'Roast log'!O1:P14");
    expect(formatAddress(spillArea({ row: 5, column: 3 }, 1, 1))).toBe("C5");
    expect(() => spillArea(parseAddress("XFD1"), 1, 2)).toThrow(SheetHostError);
  });

  test("intersection and containment", () => {
    const a = parseAddress("B2:D6");
    expect(formatAddress(intersect(a, parseAddress("C5:F9")) as never)).toBe("C5:D6");
    expect(intersect(a, parseAddress("E1:F1"))).toBeNull();
    expect(contains(a, 2, 2)).toBe(true);
    expect(contains(a, 7, 2)).toBe(false);
  });

  test("area lists split at commas outside quoted sheet names", () => {
    expect(splitAreas("A1:B2, D4")).toEqual(["A1:B2", "D4"]);
    expect(splitAreas("'a, b'!A1,'c'!B2")).toEqual(["'a, b'!A1", "'c'!B2"]);
    expect(splitAreas("")).toEqual([]);
  });
});

describe("sheet names for new sheets", () => {
  test("forbidden characters replaced, at most 31 characters", () => {
    expect(cleanSheetName("Report: a/b?")).toBe("Report a b");
    expect(cleanSheetName("x".repeat(40))).toHaveLength(31);
    expect(cleanSheetName("'quoted'")).toBe("quoted");
    expect(cleanSheetName(" ")).toBe("Report");
  });

  test("numbered names keep within 31 characters", () => {
    expect(numberedName("Shrinkwise report", 1)).toBe("Shrinkwise report");
    expect(numberedName("Shrinkwise report", 2)).toBe("Shrinkwise report 2");
    const long = numberedName("y".repeat(31), 12);
    expect(long).toHaveLength(31);
    expect(long.endsWith(" 12")).toBe(true);
  });
});
