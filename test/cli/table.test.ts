/**
 * Reading delimited text into the engine's input: one test per rule of the policy in
 * engine/cli/table.ts (header, delimiters, blanks, text, column roles).
 */
import fc from "fast-check";
import { CommandError } from "../../engine/cli/args";
import { buildFitTable, parseDelimited, readFitTable, skippedRowsMessage } from "../../engine/cli/table";

function failure(run: () => unknown): string {
  try {
    run();
  } catch (error) {
    expect(error).toBeInstanceOf(CommandError);
    return (error as Error).message;
  }
  throw new Error("expected a CommandError");
}

describe("parseDelimited", () => {
  it("reads a comma-separated header and rows, trimming names and cells", () => {
    const table = parseDelimited(" y , x1,x2 \n1, 2,3\n4,5 ,6\n");
    expect(table.columns).toEqual(["y", "x1", "x2"]);
    expect(table.rows).toEqual([
      ["1", "2", "3"],
      ["4", "5", "6"],
    ]);
  });

  it("detects tabs and semicolons", () => {
    expect(parseDelimited("y\tx\n1\t2\n3\t4").columns).toEqual(["y", "x"]);
    expect(parseDelimited("y\tx\n1\t2\n3\t4").rows).toEqual([
      ["1", "2"],
      ["3", "4"],
    ]);
    expect(parseDelimited("y;x\n1;2\n").rows).toEqual([["1", "2"]]);
  });

  it("handles Windows line ends, a byte-order mark and quoted cells", () => {
    const table = parseDelimited('\uFEFF"y","long name, with comma"\r\n"1","2"\r\n');
    expect(table.columns).toEqual(["y", "long name, with comma"]);
    expect(table.rows).toEqual([["1", "2"]]);
  });

  it("skips lines that are empty or hold only delimiters and spaces", () => {
    const table = parseDelimited("y,x\n\n1,2\n , \n,,\n3,4\n\n");
    expect(table.rows).toEqual([
      ["1", "2"],
      ["3", "4"],
    ]);
  });

  it("pads short rows with blanks and ignores a trailing delimiter's unnamed empty column", () => {
    expect(parseDelimited("y,x,z\n1,2\n").rows).toEqual([["1", "2", ""]]);
    const trailing = parseDelimited("y,x,\n1,2,\n3,4,\n");
    expect(trailing.columns).toEqual(["y", "x"]);
    expect(trailing.rows).toEqual([
      ["1", "2"],
      ["3", "4"],
    ]);
  });

  it.each([
    ["", /the file is empty/],
    ["\n\n", /the file is empty/],
    ["y,x\n", /header row but no data rows/],
    ["y,x,y\n1,2,3\n", /names column 'y' twice/],
    ["y,,x\n1,2,3\n", /column 2 has no name/],
    ["y,x\n1,2,3\n", /data row 1 has 3 values but the header names 2 columns/],
    ['y,x\n1,"2\n3,4\n', /^the file has an unmatched quote in data row 1: /],
    ['"y,x\n1,2\n', /^the file has an unmatched quote in the header row: /],
  ])("refuses %j", (text, message) => {
    expect(failure(() => parseDelimited(text))).toMatch(message);
  });
});

describe("buildFitTable", () => {
  const csv = "id,y,x1,x2,w,site\n1,10,1,5,1,north\n2,12,2,,1,north\n3,,3,4,2,south\n4,17,4,3,1,south\n5,19,5,1,0.5,east\n";

  it("uses every other numeric column as predictors by default, in file order", () => {
    const table = readFitTable("y,a,b\n1,2,3\n4,5,6\n", { target: "y" });
    expect(table.target).toBe("y");
    expect(table.predictorNames).toEqual(["a", "b"]);
    expect(table.predictors).toEqual([
      [2, 3],
      [5, 6],
    ]);
    expect(table.targetValues).toEqual([1, 4]);
    expect(table.weights).toBeNull();
    expect(table.foldLabels).toBeNull();
    expect(table.rowsUsed).toBe(2);
    expect(table.rowsSkipped).toBe(0);
  });

  it("reads a tab-separated file the same way", () => {
    const table = readFitTable("a\tb\ty\n1.5\t-2\t3e2\n4\t5\t6\n", { target: "y" });
    expect(table.predictorNames).toEqual(["a", "b"]);
    expect(table.predictors).toEqual([
      [1.5, -2],
      [4, 5],
    ]);
    expect(table.targetValues).toEqual([300, 6]);
  });

  it("skips and counts rows with a blank in the target or a predictor", () => {
    const table = readFitTable(csv, { target: "y", predictors: ["x1", "x2"] });
    expect(table.rowsUsed).toBe(3);
    expect(table.rowsSkipped).toBe(2);
    expect(table.skippedRows).toEqual([2, 3]);
    expect(table.blanksByColumn).toEqual({ x2: 1, y: 1 });
    expect(table.targetValues).toEqual([10, 17, 19]);
    expect(table.predictors).toEqual([
      [1, 5],
      [4, 3],
      [5, 1],
    ]);
    expect(skippedRowsMessage(table)).toBe("2 rows with blank cells skipped (data rows 2, 3; blanks by column: y 1, x2 1)");
  });

  it("ignores blanks and text in columns the fit doesn't use", () => {
    const table = readFitTable("y,x,note\n1,2,\n3,4,hello\n5,7,\n", { target: "y", exclude: ["note"] });
    expect(table.predictorNames).toEqual(["x"]);
    expect(table.rowsUsed).toBe(3);
    expect(table.rowsSkipped).toBe(0);
    expect(skippedRowsMessage(table)).toBeNull();
  });

  it("takes weights and fold labels from their columns, never as predictors; fold labels may be text", () => {
    const table = readFitTable(csv, { target: "y", exclude: ["id"], weightsColumn: "w", foldColumn: "site" });
    expect(table.predictorNames).toEqual(["x1", "x2"]);
    expect(table.weights).toEqual([1, 1, 0.5]);
    expect(table.foldLabels).toEqual(["north", "south", "east"]);
    expect(table.rowsUsed).toBe(3);
  });

  it("skips rows with a blank weight or fold label", () => {
    const table = readFitTable("y,x,w,g\n1,2,1,a\n2,3,,b\n3,5,1,\n4,4,2,b\n", { target: "y", weightsColumn: "w", foldColumn: "g" });
    expect(table.skippedRows).toEqual([2, 3]);
    expect(table.blanksByColumn).toEqual({ w: 1, g: 1 });
    expect(table.weights).toEqual([1, 2]);
    expect(table.foldLabels).toEqual(["a", "b"]);
  });

  it("names the text column, the first offending data row and the value", () => {
    const message = failure(() => readFitTable("y,x,train\n1,2,1\n2,3,T\n3,4,F\n", { target: "y" }));
    expect(message).toBe("column 'train' has text in data row 2 ('T'); leave the column out with --exclude train");
  });

  it("reports text in the target, a listed predictor or the weights without the --exclude hint", () => {
    expect(failure(() => readFitTable("y,x\n1,2\nNA,3\n", { target: "y" }))).toBe(
      "column 'y' has text in data row 2 ('NA'): use numbers only (leave a cell empty to skip its row)",
    );
    expect(failure(() => readFitTable("y,x\n1,2\n2,1e\n", { target: "y", predictors: ["x"] }))).toMatch(
      /^column 'x' has text in data row 2 \('1e'\): use numbers only/,
    );
    expect(failure(() => readFitTable("y,x,w\n1,2,heavy\n2,3,1\n", { target: "y", weightsColumn: "w" }))).toMatch(
      /^column 'w' has text in data row 1/,
    );
  });

  it("reads numbers with spaces around and ',' between groups of three digits (engine/numberText.ts)", () => {
    const table = readFitTable('y,x\n"1,234.5", 2 \n 3 ,"-12,000"\n5,7e-1\n', { target: "y" });
    // The decimal values written, from memory.
    expect(table.targetValues).toEqual([1234.5, 3, 5]);
    expect(table.predictors).toEqual([[2], [-12000], [0.7]]);
  });

  it("says when a cell looks like a number with a decimal comma, or like a date (exact)", () => {
    expect(failure(() => readFitTable("y;x\n1;0,5\n2;1,5\n", { target: "y" }))).toBe(
      "column 'x' has text in data row 1 ('0,5') (a decimal comma or another digit grouping? numbers are read with '.' as the decimal point and ',' between groups of three digits); leave the column out with --exclude x",
    );
    expect(failure(() => readFitTable("y,day\n1,2024-02-01\n2,2024-02-02\n", { target: "y", predictors: ["day"] }))).toBe(
      "column 'day' has text in data row 1 ('2024-02-01') (a date? the command line reads numbers only: write dates as numbers, such as days since a start date): use numbers only (leave a cell empty to skip its row)",
    );
  });

  it("reads header names and cells in Unicode NFC, so a name typed either way is found", () => {
    const table = readFitTable("cafe\u0301,x,site\n1,2,Ma\u0301laga\n2,3,M\u00e1laga\n3,5,Vigo\n", { target: "caf\u00e9", foldColumn: "site" });
    expect(table.target).toBe("caf\u00e9");
    expect(table.foldLabels).toEqual(["M\u00e1laga", "M\u00e1laga", "Vigo"]);
  });

  it("property: a table written with en-US digit grouping (Intl.NumberFormat) reads as the same numbers as written plainly", () => {
    // Reference: Intl.NumberFormat groups digits on its own; String() writes the plain form.
    const grouped = new Intl.NumberFormat("en-US", { maximumFractionDigits: 3 });
    fc.assert(
      fc.property(fc.array(fc.tuple(fc.integer({ min: -1e10, max: 1e10 }), fc.integer({ min: -1e10, max: 1e10 })), { minLength: 1, maxLength: 20 }), (pairs) => {
        const rows = pairs.map(([a, b]) => [a / 1000, b / 1000]);
        const plain = readFitTable(["y,x", ...rows.map((r) => r.map(String).join(","))].join("\n"), { target: "y" });
        const written = readFitTable(["y,x", ...rows.map((r) => r.map((v) => `" ${grouped.format(v)} "`).join(","))].join("\n"), { target: "y" });
        expect(written).toEqual(plain);
      }),
      { numRuns: 100, seed: 8 },
    );
  });

  it("counts data rows after skipped empty lines (1-based, header not counted)", () => {
    expect(failure(() => readFitTable("y,x\n1,2\n\n2,3\n3,oops\n", { target: "y" }))).toMatch(/data row 3 \('oops'\)/);
  });

  it.each([
    [{ target: "price" }, "the target 'price' is not a column of the file; the columns are 'id', 'y', 'x1', 'x2', 'w', 'site'"],
    [{ target: "y", predictors: ["x1", "x9"] }, "predictor 'x9' is not a column of the file; the columns are 'id', 'y', 'x1', 'x2', 'w', 'site'"],
    [{ target: "y", exclude: ["idx"] }, "excluded column 'idx' is not a column of the file; the columns are 'id', 'y', 'x1', 'x2', 'w', 'site'"],
    [{ target: "y", weightsColumn: "weight" }, "the weights column 'weight' is not a column of the file; the columns are 'id', 'y', 'x1', 'x2', 'w', 'site'"],
    [{ target: "y", foldColumn: "fold" }, "the fold column 'fold' is not a column of the file; the columns are 'id', 'y', 'x1', 'x2', 'w', 'site'"],
    [{ target: "y", predictors: ["x1", "y"] }, "'y' is the target: it can't also be a predictor"],
    [{ target: "y", predictors: ["x1", "w"], weightsColumn: "w" }, "'w' is the weights column: it can't also be a predictor"],
    [{ target: "y", predictors: ["site"], foldColumn: "site" }, "'site' is the fold column: it can't also be a predictor"],
    [{ target: "y", predictors: ["x1", "x1"] }, "predictor 'x1' is listed twice: list each column once"],
    [{ target: "y", weightsColumn: "y" }, "'y' can't be both the target and the weights column"],
    [{ target: "y", foldColumn: "w", weightsColumn: "w" }, "'w' can't be both the weights column and the fold column"],
    [{ target: "y", exclude: ["id", "x1", "x2", "w", "site"] }, "no predictor columns left: the file has 'id', 'y', 'x1', 'x2', 'w', 'site'"],
  ])("refuses column roles %j", (roles, message) => {
    expect(failure(() => buildFitTable(parseDelimited(csv), roles))).toBe(message);
  });

  it("refuses a file where every row has a blank", () => {
    expect(failure(() => readFitTable("y,x\n1,\n,2\n", { target: "y" }))).toBe(
      "no rows left to fit: all 2 data rows have a blank in a column the fit uses",
    );
  });

  it("lists at most ten skipped rows in the message", () => {
    const lines = ["y,x"];
    for (let i = 1; i <= 14; i++) lines.push(i % 2 === 0 ? `${i},` : `${i},${i * 2}`);
    const table = readFitTable(lines.join("\n"), { target: "y" });
    expect(table.rowsSkipped).toBe(7);
    expect(skippedRowsMessage(table, 3)).toBe("7 rows with blank cells skipped (data rows 2, 4, 6, …; blanks by column: x 7)");
  });
});

describe("buildFitTable: the target read by engine/outcome.ts readOutcome", () => {
  // Target cells quoted, so a ',' inside one stays in the cell.
  const rows = (labels: string[]): string => ["x,result", ...labels.map((label, i) => `${i + 1},"${label}"`)].join("\n");

  it("two text labels make a yes/no target: 1 for the less frequent label, counts and the other label kept", () => {
    const table = readFitTable(rows(["pass", "fail", "pass", "pass", "", "Fail "]), { target: "result" });
    expect(table.outcome).toBe("two-class");
    // readOutcome: labels match ignoring case and spaces; without an event, the less frequent label.
    expect(table.classes).toEqual({ event: "fail", other: "pass", eventRows: 2, otherRows: 3, note: null });
    expect(table.targetValues).toEqual([0, 1, 0, 0, 1]);
    expect(table.rowsSkipped).toBe(1);
  });

  it("a named event, matched ignoring case, is coded 1", () => {
    const table = readFitTable(rows(["pass", "fail", "pass"]), { target: "result", event: "PASS" });
    expect(table.classes).toMatchObject({ event: "pass", other: "fail", eventRows: 2, otherRows: 1 });
    expect(table.targetValues).toEqual([1, 0, 1]);
  });

  it("TRUE/FALSE in any case are the spreadsheet's booleans: the event is TRUE even when it is the more frequent", () => {
    const table = readFitTable(rows(["true", "TRUE", "False", "true"]), { target: "result" });
    expect(table.classes).toMatchObject({ event: "TRUE", other: "FALSE", eventRows: 3, otherRows: 1 });
    expect(table.targetValues).toEqual([1, 1, 0, 1]);
  });

  it("0/1 numbers are yes/no in auto (event 1) and numbers with outcome number", () => {
    const auto = readFitTable(rows(["1", "0", "0", "0"]), { target: "result" });
    expect(auto.outcome).toBe("two-class");
    expect(auto.classes).toMatchObject({ event: "1", other: "0" });
    const number = readFitTable(rows(["1", "0", "0", "0"]), { target: "result", outcome: "number" });
    expect(number.outcome).toBe("number");
    expect(number.classes).toBeNull();
    expect(number.targetValues).toEqual([1, 0, 0, 0]);
  });

  it("a tie between the two labels takes the first alphabetically and says so", () => {
    const table = readFitTable(rows(["pass", "fail", "fail", "pass"]), { target: "result" });
    expect(table.classes?.event).toBe("fail");
    expect(table.classes?.note).toBe("both classes have 2 rows, so the event is 'fail' (first in alphabetical order); name another with --event <label>");
  });

  it("numbers stay a number target, read as before", () => {
    const table = readFitTable(rows(["1.5", "2", "1,234.5"]), { target: "result" });
    expect(table.outcome).toBe("number");
    expect(table.targetValues).toEqual([1.5, 2, 1234.5]);
  });

  it("refuses with readOutcome's messages: an unknown event, three labels, one class, labels under outcome number", () => {
    const message = (text: string, roles: Parameters<typeof readFitTable>[1]): string => {
      try {
        readFitTable(text, roles);
      } catch (error) {
        return (error as Error).message;
      }
      throw new Error("expected a failure");
    };
    expect(message(rows(["pass", "fail"]), { target: "result", event: "ok" })).toBe("event 'ok' is not one of 'result''s two values ('pass', 'fail'): name one of them");
    expect(message(rows(["a", "b", "c"]), { target: "result", outcome: "two-class" })).toMatch(/^'result' has 3 distinct values \('a', 'b', 'c'\): a yes\/no outcome needs exactly two/);
    expect(message(rows(["pass", "pass"]), { target: "result", outcome: "two-class" })).toMatch(/^'result' has only one class \('pass'\)/);
    // outcome number on two labels: readOutcome's words (a yes/no target), as the cells give them.
    expect(message(rows(["pass", "fail", "pass"]), { target: "result", outcome: "number" })).toMatch(/^'result' holds two labels \('pass', 'fail'\), not numbers: it is a yes\/no outcome/);
    // Other text: the column is a numeric column, checked as before (row, value).
    expect(failure(() => readFitTable(rows(["pass", "fail", "n/a"]), { target: "result", outcome: "number" }))).toBe(
      "column 'result' has text in data row 1 ('pass'): use numbers only (leave a cell empty to skip its row)",
    );
  });

  it("a stray text among numbers (auto) names the row and value as for any numeric column, with the decimal-comma hint", () => {
    expect(failure(() => readFitTable(rows(["1.5", "2", "3,5", "4"]), { target: "result" }))).toMatch(
      /^column 'result' has text in data row 3 \('3,5'\) \(a decimal comma/,
    );
  });
});
