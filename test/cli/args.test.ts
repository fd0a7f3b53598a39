/** Command-line argument parsing: each option, its mapping to FitOptions, and each usage error. */
import { CommandError, CommandOptions, parseArgs, parseNumber, toFitOptions, USAGE } from "../../engine/cli/args";

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
      outcome: "auto",
      event: null,
      cutoff: null,
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
      repeats: null,
      honest: false,
      stability: false,
      draws: null,
      q: null,
      threshold: null,
      predict: null,
      predictionsOut: null,
      interval: null,
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
      "one-se",
      "--error",
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
      rule: "one-se",
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
      rule: "one-se",
      measure: "mae",
      strengthCount: 30,
      lowEndRatio: 0.001,
      stopEarly: true,
      weights: [1, 2],
    });
  });

  it("accepts the older spellings silently: --rule min|onese|1se, --measure", () => {
    expect(options(["d.csv", "--target", "y", "--rule", "min"]).rule).toBe("lowest");
    expect(options(["d.csv", "--target", "y", "--rule", "onese"]).rule).toBe("one-se");
    expect(options(["d.csv", "--target", "y", "--rule", "1se"]).rule).toBe("one-se");
    expect(options(["d.csv", "--target", "y", "--rule", "lowest"]).rule).toBe("lowest");
    expect(options(["d.csv", "--target", "y", "--measure", "mae"]).measure).toBe("mae");
    expect(options(["d.csv", "--target", "y", "--error", "MAE"]).measure).toBe("mae");
  });

  it("prints only the current spellings in its help", () => {
    expect(USAGE).toContain("--error mse|mae");
    expect(USAGE).toContain("--rule lowest|one-se");
    for (const old of ["--measure", "onese", "min|", "1se"]) expect(USAGE).not.toContain(old);
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

  it("--seed out of range or not whole: the message gives the range (exact)", () => {
    expect(usageError(["d.csv", "--target", "y", "--seed", "1e20"])).toBe("--seed must be a whole number from -4294967295 to 4294967295; got '1e20'");
    expect(usageError(["d.csv", "--target", "y", "--seed", "1.5"])).toBe("--seed must be a whole number from -4294967295 to 4294967295; got '1.5'");
    expect(options(["d.csv", "--target", "y", "--seed", "-4294967295"]).seed).toBe(-4294967295);
  });

  it("--count 1 without --strength says why the model would be the intercept alone (exact)", () => {
    expect(usageError(["d.csv", "--target", "y", "--count", "1"])).toBe(
      "--count 1 tries only the top of the grid, where every penalized coefficient is 0, so the model would be the intercept alone: use 2 or more (by default 20 per tenfold drop), or fit one point with --strength",
    );
    expect(options(["d.csv", "--target", "y", "--count", "1", "--strength", "0.1", "--mix", "1"]).count).toBe(1);
  });

  it("reads column names in Unicode NFC (e + combining accent is é)", () => {
    const o = options(["d.csv", "--target", "cafe\u0301", "--predictors", "cre\u0300me, x", "--fold-column", "Ma\u0301laga"]);
    expect(o.target).toBe("caf\u00e9");
    expect(o.predictors).toEqual(["cr\u00e8me", "x"]);
    expect(o.foldColumn).toBe("M\u00e1laga");
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
    [["d.csv", "--target", "y", "--rule", "best"], /--rule must be lowest or one-se; got 'best'/],
    [["d.csv", "--target", "y", "--error", "rmse"], /^--error must be mse or mae \(a number target\) or deviance, misclassified or auc \(a yes\/no target\); got 'rmse'$/],
    [["d.csv", "--target", "y", "--measure", "rmse"], /^--error must be mse or mae \(a number target\) or deviance, misclassified or auc \(a yes\/no target\); got 'rmse'$/],
    [["d.csv", "--target", "y", "--error", "mse", "--measure", "mae"], /--error is given twice/],
    [["d.csv", "--target", "y", "--json=yes"], /--json takes no value/],
    [["d.csv", "--target", "y", "--target", "z"], /--target is given twice/],
    [["d.csv", "--target", "y", "--strength", "0.5"], /--strength fits one point: give a single --mix/],
    [["d.csv", "--target", "y", "--predictors", "a", "--exclude", "b"], /can't be used together/],
    [["d.csv", "--target", "y", "--predictors", "a,"], /--predictors has an empty item/],
  ])("refuses %j", (argv, message) => {
    expect(usageError(argv)).toMatch(message);
  });
});

describe("parseArgs: yes/no (two-class) targets", () => {
  it("reads --outcome in the spellings engine/outcome.ts parseOutcome takes; auto by default", () => {
    expect(options(["d.csv", "--target", "y"]).outcome).toBe("auto");
    expect(options(["d.csv", "--target", "y", "--outcome", "two-class"]).outcome).toBe("two-class");
    expect(options(["d.csv", "--target", "y", "--outcome=yes/no"]).outcome).toBe("two-class");
    expect(options(["d.csv", "--target", "y", "--outcome", "Number"]).outcome).toBe("number");
    expect(usageError(["d.csv", "--target", "y", "--outcome", "three-class"])).toBe("--outcome must be auto, number or two-class; got 'three-class'");
  });

  it("reads --event as text (spaces around trimmed) and --cutoff as a probability strictly between 0 and 1", () => {
    const o = options(["d.csv", "--target", "y", "--event", " fail ", "--cutoff", "0.3"]);
    expect(o.event).toBe("fail");
    expect(o.cutoff).toBe(0.3);
    for (const bad of ["0", "1", "1.5", "-0.2"]) {
      expect(usageError(["d.csv", "--target", "y", "--cutoff", bad])).toBe(`--cutoff must be a probability between 0 and 1 (not 0 or 1); got '${bad}'`);
    }
    expect(usageError(["d.csv", "--target", "y", "--cutoff", "half"])).toBe("--cutoff needs a number; got 'half'");
  });

  it("takes the five measures; refuses a yes/no measure with --outcome number in the engine's words, and the reverse", () => {
    for (const m of ["mse", "mae", "deviance", "misclassified", "auc"]) expect(options(["d.csv", "--target", "y", "--error", m.toUpperCase()]).measure).toBe(m);
    expect(usageError(["d.csv", "--target", "y", "--outcome", "number", "--error", "auc"])).toBe(
      "the error measure auc is for yes/no (two-class) outcomes, and this target is a number: use mse or mae",
    );
    expect(usageError(["d.csv", "--target", "y", "--outcome", "two-class", "--error", "mse"])).toBe(
      "the error measure mse is for number outcomes, and this target is yes/no (two-class): use deviance, misclassified or auc",
    );
  });

  it("refuses --event and --cutoff with --outcome number", () => {
    expect(usageError(["d.csv", "--target", "y", "--outcome", "number", "--event", "1"])).toBe(
      "--event names the event of a yes/no target: it can't be used with --outcome number",
    );
    expect(usageError(["d.csv", "--target", "y", "--outcome", "number", "--cutoff", "0.4"])).toBe(
      "--cutoff applies to a yes/no target: it can't be used with --outcome number",
    );
  });

  it("passes outcome and cutoff to the engine only for a target read as two-class; a number target's options are unchanged", () => {
    const o = options(["d.csv", "--target", "y", "--error", "auc", "--cutoff", "0.25"]);
    expect(toFitOptions(o, { ...noData, outcome: "two-class" })).toEqual({
      names: ["a", "b"],
      standardize: true,
      intercept: true,
      timeOrdered: false,
      outcome: "two-class",
      measure: "auc",
      cutoff: 0.25,
    });
    const plain = options(["d.csv", "--target", "y"]);
    expect(toFitOptions(plain, { ...noData, outcome: "number" })).toEqual(toFitOptions(plain, noData));
  });

  it("documents the new options in the help", () => {
    expect(USAGE).toContain("--outcome auto|number|two-class");
    expect(USAGE).toContain("--event <label>");
    expect(USAGE).toContain("--cutoff <p>");
    expect(USAGE).toContain("--error mse|mae|deviance|misclassified|auc");
  });
});

describe("parseArgs: repeats, honest error, stability, predictions", () => {
  it("reads --repeats, --honest, --stability with --draws, --q, --threshold and maps them to the engine", () => {
    const o = options(["d.csv", "--target", "y", "--repeats", "5", "--honest", "--stability", "--draws=20", "--q", "3", "--threshold", "0.8"]);
    expect(o).toMatchObject({ repeats: 5, honest: true, stability: true, draws: 20, q: 3, threshold: 0.8 });
    expect(toFitOptions(o, noData)).toMatchObject({ repeats: 5, honestError: true, stability: { draws: 20, expectedTerms: 3, threshold: 0.8 } });
    // Defaults stay out of the engine's options: --repeats 1 is one deal, --stability alone takes the engine's defaults.
    const plain = toFitOptions(options(["d.csv", "--target", "y", "--repeats", "1", "--stability"]), noData);
    expect("repeats" in plain || "honestError" in plain).toBe(false);
    expect(plain.stability).toEqual({});
  });

  it("refuses out-of-range values with the range (exact)", () => {
    expect(usageError(["d.csv", "--target", "y", "--repeats", "0"])).toBe("--repeats must be a whole number from 1 to 50; got '0'");
    expect(usageError(["d.csv", "--target", "y", "--repeats", "2.5"])).toBe("--repeats must be a whole number from 1 to 50; got '2.5'");
    expect(usageError(["d.csv", "--target", "y", "--stability", "--draws", "1001"])).toBe(
      "--draws must be a whole number from 1 to 1000 (pairs of half-samples); got '1001'",
    );
    expect(usageError(["d.csv", "--target", "y", "--stability", "--q", "0"])).toMatch(/^--q must be a whole number of 1 or more/);
    expect(usageError(["d.csv", "--target", "y", "--stability", "--threshold", "0.5"])).toBe(
      "--threshold (stability) must be between 0.5 and 1, not 0.5 or 1; got '0.5' (the yes/no cutoff is --cutoff)",
    );
  });

  it("--draws, --q and --threshold without --stability: one line saying to add it", () => {
    expect(usageError(["d.csv", "--target", "y", "--draws", "10"])).toBe("--draws sets up stability selection: add --stability (the yes/no cutoff is --cutoff)");
    expect(usageError(["d.csv", "--target", "y", "--q", "2", "--threshold", "0.9"])).toBe(
      "--q and --threshold set up stability selection: add --stability (the yes/no cutoff is --cutoff)",
    );
  });

  it("refuses what a fixed strength or fixed folds can't honour", () => {
    expect(usageError(["d.csv", "--target", "y", "--mix", "1", "--strength", "0.1", "--honest"])).toBe(
      "--honest works on the cross-validated choice, and --strength fits one point without cross-validation: leave one out",
    );
    expect(usageError(["d.csv", "--target", "y", "--time-ordered", "--repeats", "3"])).toBe(
      "--repeats 3 deals random folds again with new seeds, but --time-ordered fixes the folds (one deal): leave one out",
    );
    expect(usageError(["d.csv", "--target", "y", "--fold-column", "g", "--repeats", "3"])).toMatch(/--fold-column fixes the folds/);
  });

  it("reads --predict, --predictions-out and --interval (0.9 or 90%)", () => {
    expect(options(["d.csv", "--target", "y", "--predict", "new.csv", "--interval", "90%"])).toMatchObject({ predict: "new.csv", interval: 0.9, predictionsOut: null });
    expect(options(["d.csv", "--target", "y", "--predict", "new.csv", "--interval=0.8", "--predictions-out", "p.csv"])).toMatchObject({
      interval: 0.8,
      predictionsOut: "p.csv",
    });
  });

  it("--interval needs --predict and a level between 0 and 1; not with a yes/no outcome", () => {
    expect(usageError(["d.csv", "--target", "y", "--interval", "0.9"])).toBe("--interval gives prediction intervals for new rows: add --predict <new.csv>");
    expect(usageError(["d.csv", "--target", "y", "--predict", "n.csv", "--interval", "1"])).toBe(
      "--interval must be a coverage level between 0 and 1 (not 0 or 1), like 0.9 or 90%; got '1'",
    );
    expect(usageError(["d.csv", "--target", "y", "--predict", "n.csv", "--interval", "ninety"])).toMatch(/^--interval must be a coverage level/);
    expect(usageError(["d.csv", "--target", "y", "--outcome", "two-class", "--predict", "n.csv", "--interval", "0.9"])).toBe(
      "--interval is for number targets; a yes/no model gives probabilities: leave --interval out",
    );
    expect(usageError(["d.csv", "--target", "y", "--predictions-out", "p.csv"])).toBe("--predictions-out says where to write predictions: add --predict <new.csv>");
    expect(usageError(["-", "--target", "y", "--predict", "-"])).toMatch(/can't both come from standard input/);
  });

  it("documents the new options in the help, and where the predictions go", () => {
    for (const flag of ["--repeats", "--honest", "--stability", "--draws", "--q", "--threshold", "--predict", "--interval", "--predictions-out"]) {
      expect([flag, USAGE.includes(`  ${flag} `)]).toEqual([flag, true]);
    }
    expect(USAGE).toMatch(/without it the CSV goes to standard output and the report\s+\(or --json\) is not printed/);
  });
});

describe("--threads", () => {
  it("takes a whole number or auto, and is left out when not given", () => {
    expect((parseArgs(["d.csv", "--target", "y", "--threads", "3"]) as { options: { threads?: unknown } }).options.threads).toBe(3);
    expect((parseArgs(["d.csv", "--target", "y", "--threads=auto"]) as { options: { threads?: unknown } }).options.threads).toBe("auto");
    expect("threads" in (parseArgs(["d.csv", "--target", "y"]) as { options: object }).options).toBe(false);
  });
  it("refuses anything else with a message", () => {
    for (const bad of ["0", "1.5", "two", "-2"]) expect(() => parseArgs(["d.csv", "--target", "y", "--threads", bad])).toThrow(/--threads must be a whole number from 1 to 256, or auto/);
  });
});
