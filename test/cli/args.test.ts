/** Command-line argument parsing: each option, its mapping to FitOptions, and each usage error. */
import { CommandError, CommandOptions, parseArgs, parseNumber, toFitOptions } from "../../engine/cli/args";

function options(argv: string[]): CommandOptions {
  const parsed = parseArgs(argv);
  if (parsed.help) throw new Error("expected options, got help");
  return parsed.options;
}

function usageError(argv: string[]): string {
  try {
    parseArgs(argv);
  } catch (error) {
    expect(error).toBeInstanceOf(CommandError);
    return (error as Error).message;
  }
  throw new Error(`expected a CommandError for ${argv.join(" ")}`);
}

const noData = { names: ["a", "b"], weights: null, foldLabels: null };

describe("parseNumber", () => {
  it.each([
    ["12", 12],
    ["-0.5", -0.5],
    [" 3.25 ", 3.25],
    ["1e-3", 0.001],
    [".5", 0.5],
    ["+7", 7],
    ["5.", 5],
  ])("reads %j as %d", (text, value) => {
    expect(parseNumber(text)).toBe(value);
  });

  it.each(["", " ", "abc", "0x10", "Infinity", "NaN", "1,5", "1e999", "1.2.3", "--1"])("rejects %j", (text) => {
    expect(parseNumber(text)).toBeNull();
  });
});

describe("parseArgs", () => {
  it("needs only a file and a target; everything else is left to the engine's defaults", () => {
    const o = options(["data.csv", "--target", "y"]);
    expect(o).toEqual({
      file: "data.csv",
      target: "y",
      predictors: null,
      exclude: null,
      mixes: null,
      strength: null,
      folds: null,
      seed: null,
      rule: null,
      measure: null,
      gridDensity: null,
      count: null,
      lowEnd: null,
      stopEarly: false,
      timeOrdered: false,
      foldColumn: null,
      weightsColumn: null,
      standardize: true,
      intercept: true,
      json: false,
    });
    expect(toFitOptions(o, noData)).toEqual({ names: ["a", "b"], standardize: true, intercept: true, timeOrdered: false });
  });

  it("reads every option, in both --name value and --name=value forms", () => {
    const o = options([
      "--target=price",
      "in.tsv",
      "--mix",
      "0, 0.5,1",
      "--folds",
      "5",
      "--seed=42",
      "--rule",
      "onese",
      "--measure",
      "mae",
      "--count",
      "30",
      "--low-end",
      "0.001",
      "--stop-early",
      "--time-ordered",
      "--weights-column",
      "w",
      "--no-standardize",
      "--no-intercept",
      "--predictors",
      "a, b",
      "--json",
    ]);
    expect(o).toMatchObject({
      file: "in.tsv",
      target: "price",
      mixes: [0, 0.5, 1],
      folds: 5,
      seed: 42,
      rule: "onese",
      measure: "mae",
      count: 30,
      lowEnd: 0.001,
      stopEarly: true,
      timeOrdered: true,
      weightsColumn: "w",
      standardize: false,
      intercept: false,
      predictors: ["a", "b"],
      json: true,
    });
    expect(toFitOptions(o, { names: ["a", "b"], weights: [1, 2], foldLabels: null })).toEqual({
      names: ["a", "b"],
      standardize: false,
      intercept: false,
      timeOrdered: true,
      mixes: [0, 0.5, 1],
      folds: 5,
      seed: 42,
      rule: "onese",
      measure: "mae",
      strengthCount: 30,
      lowEndRatio: 0.001,
      stopEarly: true,
      weights: [1, 2],
    });
  });

  it("reads --grid-density; refuses it together with --count", () => {
    const o = options(["d.csv", "--target", "y", "--grid-density", "12"]);
    expect(o.gridDensity).toBe(12);
    expect(toFitOptions(o, noData)).toMatchObject({ gridDensity: 12 });
    expect(toFitOptions(o, noData).strengthCount).toBeUndefined();
    expect(() => options(["d.csv", "--target", "y", "--grid-density=12", "--count", "40"])).toThrow(
      "--grid-density and --count both set how many strengths the grid has: give one",
    );
  });

  it("reads --exclude and --fold-column; fold labels go to the engine as given", () => {
    const o = options(["d.csv", "--target", "y", "--exclude", "id,train", "--fold-column", "site"]);
    expect(o.exclude).toEqual(["id", "train"]);
    expect(o.foldColumn).toBe("site");
    expect(toFitOptions(o, { names: ["a"], weights: null, foldLabels: ["n", "s"] }).foldLabels).toEqual(["n", "s"]);
  });

  it("passes a fixed strength with one mix; a negative strength is left for the engine to refuse", () => {
    expect(toFitOptions(options(["d.csv", "--target", "y", "--strength", "0.1", "--mix", "0.5"]), noData)).toMatchObject({
      strength: 0.1,
      mixes: [0.5],
    });
    expect(options(["d.csv", "--target", "y", "--strength", "-1", "--mix", "1"]).strength).toBe(-1);
  });

  it("--strength 0 alone is the least-squares fit (a single mix is supplied)", () => {
    const o = options(["d.csv", "--target", "y", "--strength", "0"]);
    expect(o.strength).toBe(0);
    expect(o.mixes).toEqual([0]);
  });

  it("leaves range checks to the engine: --mix 2 and --folds 1 parse", () => {
    expect(options(["d.csv", "--target", "y", "--mix", "2"]).mixes).toEqual([2]);
    expect(options(["d.csv", "--target", "y", "--folds", "1"]).folds).toBe(1);
  });

  it("reads - as standard input and arguments after -- as positional", () => {
    expect(options(["-", "--target", "y"]).file).toBe("-");
    expect(options(["--target", "y", "--", "--odd-name.csv"]).file).toBe("--odd-name.csv");
  });

  it("returns help for --help or -h, whatever else is given", () => {
    expect(parseArgs(["--help"])).toEqual({ help: true });
    expect(parseArgs(["data.csv", "--bogus", "-h"])).toEqual({ help: true });
  });

  it.each([
    [["--target", "y"], /no data file given/],
    [["a.csv", "b.csv", "--target", "y"], /one data file expected, got 2/],
    [["d.csv"], /--target is missing/],
    [["d.csv", "--target"], /--target needs a value/],
    [["d.csv", "--target", "--json"], /--target needs a value/],
    [["d.csv", "--target="], /--target needs a value/],
    [["d.csv", "--target", "y", "--colour", "red"], /unknown option --colour/],
    [["d.csv", "--target", "y", "-x"], /unknown option -x/],
    [["d.csv", "--target", "y", "--folds", "x"], /--folds needs a number; got 'x'/],
    [["d.csv", "--target", "y", "--seed", "1e"], /--seed needs a number/],
    [["d.csv", "--target", "y", "--strength", "lots", "--mix", "1"], /--strength needs a number/],
    [["d.csv", "--target", "y", "--count", "ten"], /--count needs a number/],
    [["d.csv", "--target", "y", "--low-end", "small"], /--low-end needs a number/],
    [["d.csv", "--target", "y", "--mix", "0,half"], /--mix needs a number; got 'half'/],
    [["d.csv", "--target", "y", "--mix", "0,,1"], /--mix has an empty item/],
    [["d.csv", "--target", "y", "--rule", "best"], /--rule must be min or onese; got 'best'/],
    [["d.csv", "--target", "y", "--measure", "rmse"], /--measure must be mse or mae/],
    [["d.csv", "--target", "y", "--json=yes"], /--json takes no value/],
    [["d.csv", "--target", "y", "--target", "z"], /--target is given twice/],
    [["d.csv", "--target", "y", "--strength", "0.5"], /--strength fits one point: give a single --mix/],
    [["d.csv", "--target", "y", "--predictors", "a", "--exclude", "b"], /can't be used together/],
    [["d.csv", "--target", "y", "--predictors", "a,"], /--predictors has an empty item/],
  ])("refuses %j", (argv, message) => {
    expect(usageError(argv)).toMatch(message);
  });
});
