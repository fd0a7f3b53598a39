/**
 * The coefficient table's order and its tab-separated copy: intercept first, then terms by
 * standardized size (largest effect first), zeros last and flagged; full precision in the copy.
 */
import type { FitResult } from "../../../engine/fit";
import { coefficientRows, coefficientTsv } from "../../../taskpane/pane/resultsTable";

const result = {
  terms: ["size", "temp", "origin: Highland", "humidity"],
  intercept: 75.5,
  coefficients: [-0.15, 0.1, 1.5, 0],
  standardizedCoefficients: [-0.45, 0.6, 0.7, 0],
} as unknown as FitResult;

test("intercept first, then by standardized magnitude, zeros last", () => {
  expect(coefficientRows(result)).toEqual([
    { term: "intercept", coefficient: 75.5, standardized: null, zero: false },
    { term: "origin: Highland", coefficient: 1.5, standardized: 0.7, zero: false },
    { term: "temp", coefficient: 0.1, standardized: 0.6, zero: false },
    { term: "size", coefficient: -0.15, standardized: -0.45, zero: false },
    { term: "humidity", coefficient: 0, standardized: 0, zero: true },
  ]);
});

test("ties keep the predictors' order", () => {
  const tied = { ...result, coefficients: [0, 0, 0, 0], standardizedCoefficients: [0, 0, 0, 0] } as FitResult;
  expect(coefficientRows(tied).map((r) => r.term)).toEqual(["intercept", "size", "temp", "origin: Highland", "humidity"]);
});

test("tab-separated copy with a header line and full precision", () => {
  const precise = { ...result, intercept: 1 / 3 } as FitResult;
  expect(coefficientTsv(coefficientRows(precise)).split("\n")).toEqual([
    "term\tcoefficient\tstandardized coefficient",
    `intercept\t${String(1 / 3)}\t`,
    "origin: Highland\t1.5\t0.7",
    "temp\t0.1\t0.6",
    "size\t-0.15\t-0.45",
    "humidity\t0\t0",
  ]);
});

test("a yes/no fit adds the odds ratio e^coefficient (definition) after the log-odds, in the table and its copy", () => {
  const twoClass = { ...result, outcome: "two-class" } as FitResult;
  const rows = coefficientRows(twoClass);
  expect(rows[0]).toEqual({ term: "intercept", coefficient: 75.5, standardized: null, zero: false, oddsRatio: null });
  for (const row of rows.slice(1)) expect(row.oddsRatio).toBe(Math.exp(row.coefficient));
  expect(coefficientTsv(rows).split("\n").slice(0, 3)).toEqual([
    "term\tlog-odds\todds ratio\tlog-odds per SD",
    "intercept\t75.5\t\t",
    `origin: Highland\t1.5\t${String(Math.exp(1.5))}\t0.7`,
  ]);
  // A number fit's rows carry no odds ratio at all.
  expect(coefficientRows(result).every((row) => !("oddsRatio" in row))).toBe(true);
});
