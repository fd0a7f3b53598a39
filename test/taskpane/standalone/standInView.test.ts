/**
 * What the stand-in view shows in a cell (taskpane/standalone/standInView.ts, the parts without a DOM; the
 * grid itself is exercised in a browser). Expected texts follow spreadsheet display conventions
 * (common practice: "0.00" fixed decimals, "0.000E+00" scientific with a two-digit exponent,
 * TRUE/FALSE in capitals, General showing integers whole).
 */
import { displayValue, formatNumber, generalNumber } from "../../../taskpane/standalone/standInView";

// The view draws report charts with echarts, whose ES modules jest (CommonJS) cannot load; the
// parts tested here draw nothing, and the charts are exercised in test/taskpane/charts/charts.test.ts.
jest.mock("../../../taskpane/charts/charts", () => ({ mountSeriesChart: jest.fn() }));

test("General: integers whole, others to 8 significant digits, E notation when very small or large", () => {
  expect(generalNumber(116)).toBe("116");
  expect(generalNumber(-3)).toBe("-3");
  expect(generalNumber(83.92706896551722)).toBe("83.927069");
  expect(generalNumber(-0.0012797441234)).toBe("-0.0012797441");
  expect(generalNumber(0.0000336)).toBe("3.3600E-05");
  expect(generalNumber(1.5e12)).toBe("1.5000E+12");
  expect(generalNumber(0)).toBe("0");
  expect(generalNumber(Number.NaN)).toBe("#NUM!");
});

test("number formats: fixed decimals and scientific", () => {
  expect(formatNumber(0.1234567, "0.0000")).toBe("0.1235");
  expect(formatNumber(3.5, "0")).toBe("4");
  expect(formatNumber(0.02201190032, "0.000E+00")).toBe("2.201E-02");
  expect(formatNumber(688.029, "0.000E+00")).toBe("6.880E+02");
  expect(formatNumber(2.5, "@")).toBe("2.5"); // a format it doesn't know: General
});

test("cells: blank, booleans, text, errors, formatted numbers", () => {
  expect(displayValue(undefined)).toBe("");
  expect(displayValue({ value: true })).toBe("TRUE");
  expect(displayValue({ value: "origin" })).toBe("origin");
  expect(displayValue({ value: "#SPILL!", message: "O3 is not empty" })).toBe("#SPILL!");
  expect(displayValue({ value: 0.5, format: "0.00" })).toBe("0.50");
});
