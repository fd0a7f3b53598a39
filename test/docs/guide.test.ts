/**
 * The user guide (docs/guide.md) says only what Shrinkwise does. Every example table the guide
 * quotes is recomputed here through the cell functions (functions/api.ts) on the demo data
 * (addin/demo), every error message it quotes is produced again, the decimal numbers in its prose
 * are found among the recomputed results, every SHRINK function has a section with an example,
 * every setting the functions and the pane accept is described, and every picture it links is in
 * docs/img.
 *
 * Source of every expected value: the guide's own text, checked against the functions' output
 * computed now (two routes agreeing: the prose a person wrote and the program's result). Numbers
 * are compared as the guide prints them: rounded to 4 significant digits (its stated convention),
 * prose numbers at their own number of significant digits.
 */
import { existsSync, readdirSync, readFileSync } from "fs";
import { join } from "path";
import { DEFAULT_MIXES } from "../../engine/fit";
import * as api from "../../functions/api";
import type { Spill } from "../../functions/api";
import { FitCache } from "../../functions/cache";
import { toCellError } from "../../functions/errors";
import { FUNCTIONS } from "../../functions/functions";
import { InProcessRunner } from "../../functions/inProcessRunner";
import type { FitRunner } from "../../functions/runner";
import { DEFAULT_CUTOFF, SETTING_NAMES } from "../../functions/settings";
import { FIELDS, WEIGHTS_FIELD } from "../../taskpane/pane/settingsForm";
import { demoSheet, qualitySheet, type DemoSheet } from "../../taskpane/standalone/preview";

// eslint-disable-next-line @typescript-eslint/no-require-imports
const { renderMarkdown } = require("../../addin/guidePage.js") as {
  renderMarkdown(markdown: string): { headings: { level: number; text: string; id: string }[]; images: string[]; links: string[] };
};

const ROOT = join(__dirname, "..", "..");
const GUIDE = readFileSync(join(ROOT, "docs", "guide.md"), "utf8");
const IMG = join(ROOT, "docs", "img");

// ---------------------------------------------------------------------------------------------
// The guide's parts

/** The guide's blocks: paragraphs (lines joined) and tables (rows of cells), with their section. */
type Block = { kind: "paragraph"; text: string; section: string } | { kind: "table"; rows: string[][]; section: string };

function blocks(markdown: string): Block[] {
  const lines = markdown.split("\n");
  const out: Block[] = [];
  let section = "";
  let i = 0;
  while (i < lines.length) {
    const line = lines[i];
    if (line.trim() === "") {
      i++;
    } else if (/^#{1,6}\s/.test(line)) {
      section = line.replace(/^#+\s+/, "");
      i++;
    } else if (line.startsWith("|")) {
      const rows: string[][] = [];
      while (i < lines.length && lines[i].startsWith("|")) {
        const cells = lines[i++].trim().replace(/^\|/, "").replace(/\|$/, "").split("|").map((cell) => cell.trim());
        if (!cells.every((cell) => /^:?-+:?$/.test(cell))) rows.push(cells);
      }
      out.push({ kind: "table", rows, section });
    } else if (line.startsWith("```")) {
      i++;
      while (i < lines.length && !lines[i].startsWith("```")) i++;
      i++;
    } else {
      const text: string[] = [];
      while (i < lines.length && lines[i].trim() !== "" && !lines[i].startsWith("|") && !/^#{1,6}\s/.test(lines[i])) text.push(lines[i++].trim());
      out.push({ kind: "paragraph", text: text.join(" "), section });
    }
  }
  return out;
}

const BLOCKS = blocks(GUIDE);

/** The text of the part of the guide under the heading `title`, up to the next heading of the same or a higher level. */
function sectionText(title: string): string {
  const lines = GUIDE.split("\n");
  const start = lines.findIndex((line) => /^#{1,6}\s/.test(line) && line.replace(/^#+\s+/, "") === title);
  if (start < 0) return "";
  const level = /^#+/.exec(lines[start])![0].length;
  const end = lines.findIndex((line, k) => k > start && /^#{1,6}\s/.test(line) && /^#+/.exec(line)![0].length <= level);
  return lines.slice(start, end < 0 ? undefined : end).join("\n");
}

/** A result example: the paragraph "`=SHRINK…` … returns …:" and the table right after it. */
interface ResultExample {
  key: string;
  paragraph: string;
  rows: string[][];
  section: string;
}

function resultExamples(): ResultExample[] {
  const found: ResultExample[] = [];
  BLOCKS.forEach((block, k) => {
    const next = BLOCKS[k + 1];
    if (block.kind !== "paragraph" || !block.text.startsWith("`=SHRINK.") || !next || next.kind !== "table") return;
    const at = block.text.indexOf(" returns");
    if (at < 0 || !block.text.endsWith(":")) return;
    found.push({ key: block.text.slice(0, at), paragraph: block.text, rows: next.rows, section: block.section });
  });
  return found;
}

/** An error example: a table row `| \`=SHRINK…\` [condition] | \`#CODE\` | message |`. */
interface ErrorExample {
  key: string;
  code: string;
  message: string;
}

function errorExamples(): ErrorExample[] {
  const found: ErrorExample[] = [];
  for (const block of BLOCKS) {
    if (block.kind !== "table") continue;
    for (const row of block.rows) {
      const code = /^`(#[A-Z/0!?]+)`$/.exec(row[1] ?? "");
      if (row[0].startsWith("`=SHRINK.") && code) found.push({ key: row[0], code: code[1], message: row[2] });
    }
  }
  return found;
}

// ---------------------------------------------------------------------------------------------
// What each quoted formula computes, on the demo workbook's sheets (ranges as in the guide's
// "The demo data": M1:M121 the score, B1:L121 the predictors, B124:L132 the new batches).

const roast = demoSheet();
const quality = qualitySheet();

/** `grid` with the cell at (row, column) (0-based, header row 0) replaced. */
function withCell(grid: unknown[][], row: number, column: number, value: unknown): unknown[][] {
  return grid.map((cells, r) => (r === row ? cells.map((cell, c) => (c === column ? value : cell)) : cells));
}

/** The demo sheet as a host that hands empty cells over as 0 would pass it. */
function blanksAsZero(sheet: DemoSheet): DemoSheet {
  const zero = (grid: unknown[][]): unknown[][] => grid.map((cells) => cells.map((cell) => (cell === null ? 0 : cell)));
  return { target: zero(sheet.target), predictors: zero(sheet.predictors), newRows: sheet.newRows };
}

/** Column G (moisture) is the 6th of B:L. */
const MOISTURE = 5;

type Compute = (runner: FitRunner) => Promise<Spill>;

const COMPUTE: Record<string, Compute> = {
  "`=SHRINK.COEFS(M1:M121, B1:L121)`": (r) => api.coefs(r, roast.target, roast.predictors, null, null),
  "`=SHRINK.CHOICE(M1:M121, B1:L121)`": (r) => api.choice(r, roast.target, roast.predictors, null, null),
  "`=SHRINK.PREDICT(M1:M121, B1:L121, B124:L132)`": (r) => api.predict(r, roast.target, roast.predictors, roast.newRows, null, null),
  '`=SHRINK.PREDICT(M1:M121, B1:L121, B124:L132, , "interval=0.9")`': (r) => api.predict(r, roast.target, roast.predictors, roast.newRows, null, "interval=0.9"),
  // O1# is the table SHRINK.COEFS spills from O1.
  "`=SHRINK.APPLY(O1#, B124:L132)`": async (r) => api.apply(await api.coefs(r, roast.target, roast.predictors, null, null), roast.newRows),
  "`=SHRINK.PATH(M1:M121, B1:L121)`": (r) => api.path(r, roast.target, roast.predictors, null, null),
  "`=SHRINK.CVCURVE(M1:M121, B1:L121)`": (r) => api.cvcurve(r, roast.target, roast.predictors, null, null),
  "`=SHRINK.KEPT(M1:M121, B1:L121)`": (r) => api.kept(r, roast.target, roast.predictors, null, null),
  "`=SHRINK.SCORE(M1:M121, SHRINK.PREDICT(M1:M121, B1:L121, B1:L121))`": async (r) =>
    api.score(roast.target, await api.predict(r, roast.target, roast.predictors, roast.predictors, null, null)),
  "`=SHRINK.BASELINE(M1:M121, B1:L121)`": (r) => api.baseline(r, roast.target, roast.predictors),
  '`=SHRINK.COEFS(M1:M121, B1:L121, , "folds=5; rule=one-se; seed=7")`': (r) => api.coefs(r, roast.target, roast.predictors, null, "folds=5; rule=one-se; seed=7"),
  // The quality-check sheet: N1:N301 pass/fail, B1:M301 its predictors.
  "`=SHRINK.COEFS(N1:N301, B1:M301)` on that sheet": (r) => api.coefs(r, quality.target, quality.predictors, null, null),
  "`=SHRINK.CHOICE(M1:M121, B1:L121)`, with the four empty cells arriving as 0,": (r) => {
    const sheet = blanksAsZero(roast);
    return api.choice(r, sheet.target, sheet.predictors, null, null);
  },
  '`=SHRINK.CHOICE(M1:M121, B1:L121, , "zero is missing=all")`, with the four empty cells arriving as 0,': (r) => {
    const sheet = blanksAsZero(roast);
    return api.choice(r, sheet.target, sheet.predictors, null, "zero is missing=all");
  },
  // Error examples.
  "`=SHRINK.COEFS(M1:M121, B1:L121, 2)`": (r) => api.coefs(r, roast.target, roast.predictors, [[2]], null),
  '`=SHRINK.COEFS(M1:M121, B1:L121, , "folds=1")`': (r) => api.coefs(r, roast.target, roast.predictors, null, "folds=1"),
  // M1:M100 is the header and the first 99 scores.
  "`=SHRINK.COEFS(M1:M100, B1:L121)`": (r) => api.coefs(r, roast.target.slice(0, 100), roast.predictors, null, null),
  // G7: moisture of the sixth batch (sheet row 7 = predictors row 6 below the header row 0).
  "`=SHRINK.COEFS(M1:M121, B1:L121)` with `n/a` typed in G7": (r) => api.coefs(r, roast.target, withCell(roast.predictors, 6, MOISTURE, "n/a"), null, null),
  '`=SHRINK.CVCURVE(M1:M121, B1:L121, 1, "strength=0.05")`': (r) => api.cvcurve(r, roast.target, roast.predictors, 1, "strength=0.05"),
  // G127: moisture of the third new batch (new rows start at sheet row 124, the header).
  "`=SHRINK.PREDICT(M1:M121, B1:L121, B124:L132)` with G127 empty": (r) => api.predict(r, roast.target, roast.predictors, withCell(roast.newRows, 3, MOISTURE, null), null, null),
};

/** One shared fit cache, as in Excel: formulas over the same inputs fit once. */
const runner = new FitCache(new InProcessRunner());
const results = new Map<string, Promise<Spill>>();

function compute(key: string): Promise<Spill> {
  const run = COMPUTE[key];
  if (!run) throw new Error(`the guide quotes ${key}, which this test does not know how to compute: add it to COMPUTE`);
  if (!results.has(key)) {
    const promise = run(runner);
    promise.catch(() => undefined); // error examples reject on purpose; awaited where used
    results.set(key, promise);
  }
  return results.get(key)!;
}

/** A cell as the guide prints it: numbers to 4 significant digits, booleans as Excel shows them. */
function shown(cell: unknown): string {
  if (typeof cell === "number") return String(Number(cell.toPrecision(4)));
  if (typeof cell === "boolean") return cell ? "TRUE" : "FALSE";
  if (cell === null || cell === undefined) return "";
  return String(cell);
}

const ELISION = "…";

/**
 * The guide's rows against the spilled rows: without an elision row (`| … |`) they must be the
 * same rows; with one, the quoted rows must appear in the output in order (the elided ones left out),
 * and the first quoted row must be the first row of the output.
 */
function compareRows(quoted: string[][], spilled: unknown[][]): void {
  const actual = spilled.map((row) => row.map(shown));
  const elided = quoted.some((row) => row.length === 1 && row[0] === ELISION);
  const wanted = quoted.filter((row) => !(row.length === 1 && row[0] === ELISION));
  if (!elided) {
    expect(wanted).toEqual(actual);
    return;
  }
  expect(wanted[0]).toEqual(actual[0]);
  let at = 0;
  for (const row of wanted) {
    const found = actual.findIndex((candidate, k) => k >= at && candidate.join("|") === row.join("|"));
    if (found < 0) throw new Error(`the guide's row | ${row.join(" | ")} | is not in the output (after row ${at})`);
    at = found + 1;
  }
}

/** The first error value in a spill, or the error a rejected call gave. */
async function errorOf(key: string): Promise<{ code: string; message: string }> {
  try {
    const spill = await compute(key);
    for (const row of spill) {
      for (const cell of row) {
        if (cell && typeof cell === "object" && typeof (cell as { code?: unknown }).code === "string") {
          return cell as unknown as { code: string; message: string };
        }
      }
    }
  } catch (error) {
    return error as { code: string; message: string };
  }
  throw new Error(`${key} gave no error value`);
}

/**
 * Every number in the computed results (for the prose check), except the long PATH and CVCURVE
 * tables: with hundreds of values, almost any short decimal would match one of them.
 */
async function allNumbers(): Promise<number[]> {
  const numbers: number[] = [];
  for (const key of Object.keys(COMPUTE).filter((k) => !/SHRINK\.(PATH|CVCURVE)\(/.test(k))) {
    try {
      for (const row of await compute(key)) for (const cell of row) if (typeof cell === "number") numbers.push(cell);
    } catch {
      // error examples
    }
  }
  return numbers;
}

function significantDigits(literal: string): number {
  return literal.replace(/^-/, "").replace(".", "").replace(/^0+/, "").length;
}

// ---------------------------------------------------------------------------------------------

describe("docs/guide.md: every quoted result is what the functions return on the demo data", () => {
  const examples = resultExamples();

  test("the guide quotes result examples, each one a formula this test computes", () => {
    expect(examples.length).toBeGreaterThanOrEqual(Object.keys(FUNCTIONS).length);
    for (const example of examples) expect(Object.keys(COMPUTE)).toContain(example.key);
  });

  test.each(examples.map((example) => [example.key, example] as const))("%s", async (_key, example) => {
    const spill = await compute(example.key);
    compareRows(example.rows, spill);
    // "returns 102 rows": the size the guide states.
    const count = /returns (\d[\d,]*) rows/.exec(example.paragraph);
    if (count) expect(spill.length).toBe(Number(count[1].replace(/,/g, "")));
  }, 120000);
});

describe("docs/guide.md: every quoted message is the one the cell shows", () => {
  const errors = errorExamples();

  test("there are error examples, #VALUE! and #N/A among them", () => {
    expect(new Set(errors.map((e) => e.code))).toEqual(new Set(["#VALUE!", "#N/A"]));
  });

  test.each(errors.map((e) => [e.key, e] as const))("%s", async (_key, example) => {
    const error = await errorOf(example.key);
    expect({ code: error.code, message: error.message }).toEqual({ code: example.code, message: example.message });
  }, 120000);

  test("the misspelt setting's message begins as quoted", async () => {
    const quoted = /"(unknown setting 'fold': [^"]*?)…"/.exec(GUIDE);
    expect(quoted).not.toBeNull();
    const error = (await api.coefs(runner, roast.target, roast.predictors, null, "fold=5").catch((e: unknown) => e)) as { code: string; message: string };
    expect(error.code).toBe("#VALUE!");
    expect(error.message.startsWith(quoted![1])).toBe(true);
    expect(GUIDE).toContain('`"fold=5"` gives `#VALUE!`');
  });

  test("an internal failure's message begins as quoted (functions/errors.ts toCellError)", () => {
    const prose = BLOCKS.map((block) => (block.kind === "paragraph" ? block.text : "")).join("\n");
    expect(prose).toContain('If a message starts with "Shrinkwise could not finish"');
    expect(toCellError(new Error("x")).message).toBe("Shrinkwise could not finish: x");
  });
});

/** The value in a label | value spill (SHRINK.CHOICE), by label. */
function valueOf(spill: Spill, label: string): unknown {
  const row = spill.find((cells) => cells[0] === label);
  if (!row) throw new Error(`no '${label}' row`);
  return row[1];
}

describe("docs/guide.md: numbers in the prose", () => {
  test("step 5 quotes the choice as the pane shows it (strength to 6 digits, error to 3, SE to 2: pane.ts's formats)", async () => {
    const choice = await compute("`=SHRINK.CHOICE(M1:M121, B1:L121)`");
    const step = BLOCKS.filter((block) => block.kind === "paragraph" && block.section === "Step 5: read the result")
      .map((block) => (block as { text: string }).text)
      .join("\n");
    const strength = Number((valueOf(choice, "strength") as number).toPrecision(6));
    const error = (valueOf(choice, "CV MSE") as number).toPrecision(3);
    const se = (valueOf(choice, "± SE") as number).toPrecision(2);
    expect(step).toContain(`the lasso (mix ${valueOf(choice, "mix")}) at strength ${strength}`);
    expect(step).toContain(`mean squared error of ${error} ± ${se}`);
    expect(step).toContain(`keeping ${valueOf(choice, "terms kept")} of the 12 terms`);
    expect(step).toContain(`${valueOf(choice, "rows used")} rows were used and ${valueOf(choice, "rows skipped")} skipped`);
  }, 120000);

  test("the cautions' and the yes/no section's worked numbers are the coefficients they name", async () => {
    const coefs = await compute("`=SHRINK.COEFS(M1:M121, B1:L121)`");
    const moisture = valueOf(coefs, "moisture") as number;
    expect(sectionText("Cautions")).toContain(`lowers the score by ${Number(Math.abs(moisture).toPrecision(2))}`);
    const twoClass = await compute("`=SHRINK.COEFS(N1:N301, B1:M301)` on that sheet");
    const odds = twoClass.find((cells) => cells[0] === "moisture")![2] as number;
    expect(sectionText("Yes/no targets")).toContain(`An odds ratio of ${Number(odds.toPrecision(4))} for moisture`);
  }, 120000);

  test("every decimal number in the prose is a recomputed result at the digits shown, or a documented default (cutoff, mixes)", async () => {
    const numbers = await allNumbers();
    const allowed = [DEFAULT_CUTOFF, ...DEFAULT_MIXES];
    const prose = BLOCKS.filter((block): block is Extract<Block, { kind: "paragraph" }> => block.kind === "paragraph" && block.section !== "Settings")
      .map((block) => block.text.replace(/`[^`]*`/g, "").replace(/\]\([^)]*\)/g, "]").replace(/https?:\/\/\S+/g, ""))
      .join("\n");
    const literals = prose.match(/-?\d+\.\d+/g) ?? [];
    expect(literals.length).toBeGreaterThan(5);
    for (const literal of literals) {
      const value = Number(literal);
      const digits = significantDigits(literal);
      const match = [...numbers, ...allowed].some((n) => Number(n.toPrecision(digits)) === value || Number(Math.abs(n).toPrecision(digits)) === value);
      if (!match) throw new Error(`the guide's prose says ${literal}, which no recomputed result gives at ${digits} significant digits`);
    }
  }, 120000);
});

describe("docs/guide.md: coverage", () => {
  test("every SHRINK function has a section with at least one real example of it", () => {
    const examples = resultExamples();
    for (const id of Object.keys(FUNCTIONS)) {
      const heading = `SHRINK.${id}`;
      expect(sectionText(heading)).not.toBe("");
      expect(examples.some((example) => example.section === heading && example.key.startsWith(`\`=SHRINK.${id}(`))).toBe(true);
    }
  });

  test("the walkthrough has six to ten steps", () => {
    const steps = GUIDE.split("\n").filter((line) => /^### Step \d+:/.test(line));
    expect(steps.length).toBeGreaterThanOrEqual(6);
    expect(steps.length).toBeLessThanOrEqual(10);
    steps.forEach((line, k) => expect(line.startsWith(`### Step ${k + 1}:`)).toBe(true));
  });

  test("every setting the cell functions accept is in the settings table, by its name", () => {
    const settings = sectionText("Settings");
    for (const name of SETTING_NAMES) expect(settings).toContain(`| \`${name}\` |`);
  });

  test("every setting the pane offers is in the settings table, by its label in the pane", () => {
    const settings = sectionText("Settings");
    for (const field of [...FIELDS, WEIGHTS_FIELD]) expect(settings).toContain(field.label);
  });

  test("the troubleshooting and caution topics are there", () => {
    const troubleshooting = sectionText("Troubleshooting");
    for (const topic of ["certificate", "#SPILL!", "#VALUE!", "#N/A", "arrive as 0"]) expect(troubleshooting).toContain(topic);
    const cautions = sectionText("Cautions");
    for (const topic of ["shrunk", "not cause", "Probabilities", "cutoff"]) expect(cautions).toContain(topic);
  });
});

describe("docs/guide.md: pictures and links", () => {
  const rendered = renderMarkdown(GUIDE);

  test("every picture the guide links is in docs/img, and every picture there is linked", () => {
    const linked = new Set(rendered.images);
    expect(linked.size).toBeGreaterThan(0);
    for (const src of linked) {
      expect(src.startsWith("img/")).toBe(true);
      if (!existsSync(join(ROOT, "docs", src))) throw new Error(`docs/guide.md links ${src}, which is missing: run npx jest test/browser/guideScreenshots.test.ts`);
    }
    const present = existsSync(IMG) ? readdirSync(IMG).filter((name) => name.endsWith(".png")) : [];
    for (const name of present) expect(linked).toContain(`img/${name}`);
  });

  test("every link inside the guide leads to one of its headings", () => {
    const ids = new Set(rendered.headings.map((heading) => heading.id));
    const anchors = rendered.links.filter((href) => href.startsWith("#"));
    expect(anchors.length).toBeGreaterThan(3);
    for (const href of anchors) expect(ids).toContain(href.slice(1));
  });
});
