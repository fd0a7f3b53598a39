/**
 * The cell policy of functions/cells.ts, one test per row of its table, plus the shapes an
 * error cell may arrive in.
 */
import { classifyCell, describeCell, errorText, parseNumberText, storedAsTextHint, textKey, toGrid } from "../../functions/cells";

describe("policy rows", () => {
  test("null, undefined, empty text and spaces are blank", () => {
    for (const raw of [null, undefined, "", "   "]) expect(classifyCell(raw)).toEqual({ kind: "blank" });
  });
  test("finite numbers (dates are serial numbers) are numbers; 0 stays 0 here", () => {
    expect(classifyCell(45000)).toEqual({ kind: "number", value: 45000 });
    expect(classifyCell(0)).toEqual({ kind: "number", value: 0 });
    expect(classifyCell(-2.5)).toEqual({ kind: "number", value: -2.5 });
  });
  test("TRUE / FALSE are booleans", () => {
    expect(classifyCell(true)).toEqual({ kind: "boolean", value: true });
    expect(classifyCell(false)).toEqual({ kind: "boolean", value: false });
  });
  test("text is trimmed text, numbers stored as text stay text", () => {
    expect(classifyCell("  North ")).toEqual({ kind: "text", value: "North" });
    expect(classifyCell("12")).toEqual({ kind: "text", value: "12" });
    expect(storedAsTextHint("12")).toBe(" (a number stored as text?)");
    expect(storedAsTextHint("n/a")).toBe("");
  });
  test("NaN, infinities and unknown objects are errors, never numbers", () => {
    expect(classifyCell(NaN)).toEqual({ kind: "error", text: "#NUM!" });
    expect(classifyCell(Infinity)).toEqual({ kind: "error", text: "#NUM!" });
    expect(classifyCell({ some: "thing" })).toEqual({ kind: "error", text: "#VALUE!" });
    expect(classifyCell([1, 2])).toEqual({ kind: "error", text: "#VALUE!" });
  });
});

describe("error cells in every plausible shape", () => {
  test("CustomFunctions.Error instances", () => {
    const cell = new CustomFunctions.Error(CustomFunctions.ErrorCode.notAvailable);
    expect(classifyCell(cell)).toEqual({ kind: "error", text: "#N/A" });
  });
  test("objects with an error code, type or errorType", () => {
    expect(classifyCell({ code: "#DIV/0!" })).toEqual({ kind: "error", text: "#DIV/0!" });
    expect(classifyCell({ code: "notAvailable" })).toEqual({ kind: "error", text: "#N/A" });
    expect(classifyCell({ type: "Error", errorType: "Div0" })).toEqual({ kind: "error", text: "#DIV/0!" });
    expect(classifyCell({ type: "Error", basicValue: "#REF!" })).toEqual({ kind: "error", text: "#REF!" });
    expect(classifyCell({ errorType: "NotAvailable" })).toEqual({ kind: "error", text: "#N/A" });
    expect(classifyCell(new Error("boom"))).toEqual({ kind: "error", text: "#VALUE!" });
  });
  test("error texts, any case, spaces around", () => {
    expect(classifyCell("#N/A")).toEqual({ kind: "error", text: "#N/A" });
    expect(classifyCell(" #div/0! ")).toEqual({ kind: "error", text: "#DIV/0!" });
    expect(classifyCell("#VALUE!")).toEqual({ kind: "error", text: "#VALUE!" });
    expect(classifyCell("#SPILL!")).toEqual({ kind: "error", text: "#SPILL!" });
    expect(errorText("#NA")).toBeNull();
    expect(classifyCell("#hashtag")).toEqual({ kind: "text", value: "#hashtag" });
  });
  test("wrapped cell values are unwrapped", () => {
    expect(classifyCell({ type: "Double", basicValue: 4 })).toEqual({ kind: "number", value: 4 });
    expect(classifyCell({ type: "String", basicValue: "East" })).toEqual({ kind: "text", value: "East" });
    expect(classifyCell({ type: "Boolean", basicValue: true })).toEqual({ kind: "boolean", value: true });
  });
});

describe("helpers", () => {
  test("describeCell names values the way messages show them", () => {
    expect(describeCell(classifyCell("x"))).toBe("'x'");
    expect(describeCell(classifyCell(3))).toBe("3");
    expect(describeCell(classifyCell(true))).toBe("TRUE");
    expect(describeCell(classifyCell(null))).toBe("blank");
    expect(describeCell(classifyCell("#N/A"))).toBe("#N/A");
  });
  test("toGrid: scalar → 1×1, flat array → column, ragged rows padded with blanks", () => {
    expect(toGrid(5)).toEqual([[5]]);
    expect(toGrid(null)).toEqual([]);
    expect(toGrid([1, 2])).toEqual([[1], [2]]);
    expect(toGrid([[1, 2], [3]])).toEqual([
      [1, 2],
      [3, null],
    ]);
  });
  test("parseNumberText reads plain decimals only", () => {
    expect(parseNumberText(" 1e-3 ")).toBe(0.001);
    expect(parseNumberText("0x10")).toBeNull();
    expect(parseNumberText("Infinity")).toBeNull();
  });
  test("textKey ignores case and spacing", () => {
    expect(textKey("  Grid   Size ")).toBe("grid size");
  });
});
