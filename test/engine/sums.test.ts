/**
 * engine/sums.ts: the sums table's checks, its JSON and long forms, and the in-memory sums.
 *
 * Sources of the expected values:
 * - In-memory sums: recomputed here by a plain two-pass loop in extended precision (each sum
 *   accumulated in two doubles, Kahan–Babuška–Neumaier; Neumaier 1974, ZAMM 54), from the
 *   definitions in sumsTable.ts (common practice: two-pass centred sums); tolerance 1e-12
 *   relative to √(diagonal × diagonal).
 * - Round trips: bit for bit (Object.is on every number), the property the formats promise.
 * - Bad input: each message must name what to fix (the brief's list of cases).
 */
import fc from "fast-check";
import { InputError } from "../../engine/errors";
import { checkSums, parseSumsJSON, sumsFromLong, sumsOfRows, sumsToJSON, sumsToLong } from "../../engine/sums";
import { SumsTable, SUMS_VERSION, upperIndex } from "../../engine/sumsTable";
import { TestRandom } from "../helpers/random";

interface Rows {
  x: number[][];
  y: number[];
  w: number[] | null;
  labels: (string | number)[];
  names: string[];
}

/** Roastery-flavoured rows: bean temperature, drum speed, … a roast's weight loss as the target. */
function makeRows(seed: number, n: number, p: number, weighted: boolean, offset = 0, blocks = 4): Rows {
  const random = new TestRandom(seed);
  const x: number[][] = [];
  const y: number[] = [];
  for (let i = 0; i < n; i++) {
    const row = Array.from({ length: p }, (_, j) => offset + (j + 1) * random.normal() + j);
    x.push(row);
    y.push(offset + row.reduce((s, v, j) => s + (j % 2 ? -0.5 : 0.8) * (v - offset), 0) + random.normal());
  }
  const w = weighted ? y.map(() => (random.uniform() < 0.1 ? 0 : 0.2 + 3 * random.uniform())) : null;
  const labels = y.map((_, i) => `batch-${(i * 7) % blocks}`);
  const names = Array.from({ length: p }, (_, j) => ["bean_temp", "drum_rpm", "airflow", "charge_kg", "humidity", "first_crack_s"][j % 6] + (j >= 6 ? `_${j}` : ""));
  return { x, y, w, labels, names };
}

/** Neumaier's compensated sum of a list. */
function exactSum(values: number[]): number {
  let s = 0;
  let c = 0;
  for (const v of values) {
    const t = s + v;
    c += Math.abs(s) >= Math.abs(v) ? s - t + v : v - t + s;
    s = t;
  }
  return s + c;
}

function sameBits(a: unknown, b: unknown, path = "table"): void {
  if (typeof a === "number" && typeof b === "number") {
    if (!Object.is(a, b)) throw new Error(`${path}: ${a} !== ${b}`);
    return;
  }
  if (Array.isArray(a) && Array.isArray(b)) {
    expect(a.length).toBe(b.length);
    a.forEach((v, i) => sameBits(v, b[i], `${path}[${i}]`));
    return;
  }
  if (a && b && typeof a === "object" && typeof b === "object") {
    expect(Object.keys(a as object).sort()).toEqual(Object.keys(b as object).sort());
    for (const key of Object.keys(a as object)) sameBits((a as Record<string, unknown>)[key], (b as Record<string, unknown>)[key], `${path}.${key}`);
    return;
  }
  expect(a).toEqual(b);
}

function tableOf(rows: Rows, extra: Parameters<typeof sumsOfRows>[6] = {}): SumsTable {
  return sumsOfRows(rows.x, rows.y, rows.w, rows.labels, rows.names, "weight_loss", extra);
}

describe("sumsOfRows", () => {
  it("gives the two-pass centred sums of every block (compensated reference loop)", () => {
    for (const weighted of [false, true]) {
      const rows = makeRows(11, 300, 5, weighted, 40);
      const table = tableOf(rows);
      const p = rows.names.length;
      const weightOf = (i: number): number => (rows.w ? rows.w[i] : 1);
      const all = rows.y.map((_, i) => i);
      const total = exactSum(all.map(weightOf));
      const centre = rows.names.map((_, j) => exactSum(all.map((i) => weightOf(i) * rows.x[i][j])) / total);
      const centreY = exactSum(all.map((i) => weightOf(i) * rows.y[i])) / total;
      table.centre.terms.forEach((c, j) => expect(Math.abs(c - centre[j])).toBeLessThanOrEqual(1e-14 * Math.abs(centre[j])));
      expect(Math.abs(table.centre.target - centreY)).toBeLessThanOrEqual(1e-14 * Math.abs(centreY));
      expect(table.blocks.map((b) => b.label)).toEqual(["batch-0", "batch-1", "batch-2", "batch-3"]);
      for (const block of table.blocks) {
        const members = all.filter((i) => rows.labels[i] === block.label);
        const c = table.centre.terms;
        const cy = table.centre.target;
        const d = (i: number, j: number): number => (j < p ? rows.x[i][j] - c[j] : rows.y[i] - cy);
        const sumOf = (a: number, b: number): number => exactSum(members.map((i) => weightOf(i) * d(i, a) * d(i, b)));
        const W = exactSum(members.map(weightOf));
        expect(block.rows).toBe(members.length);
        expect(Math.abs(block.weight - W)).toBeLessThanOrEqual(1e-14 * W);
        for (let a = 0; a <= p; a++) {
          const offset = exactSum(members.map((i) => weightOf(i) * d(i, a))) / W;
          const got = a < p ? block.offset[a] : block.offsetY;
          expect(Math.abs(got - offset)).toBeLessThanOrEqual(1e-12 * Math.sqrt(sumOf(a, a) / W));
          for (let b = a; b <= p; b++) {
            const want = sumOf(a, b);
            const have = b < p ? block.cross[upperIndex(p, a, b)] : a < p ? block.crossY[a] : block.yy;
            expect(Math.abs(have - want)).toBeLessThanOrEqual(1e-12 * Math.sqrt(sumOf(a, a) * sumOf(b, b)));
          }
        }
        const largest = rows.names.map((_, j) => Math.max(...members.filter((i) => weightOf(i) > 0).map((i) => Math.abs(rows.x[i][j]))));
        expect(block.largest).toEqual(largest);
      }
    }
  });

  it("keeps time order when asked, and sorts numeric labels as numbers", () => {
    const rows = makeRows(3, 60, 2, false);
    rows.labels = rows.y.map((_, i) => 10 - Math.floor(i / 20) * 4); // 10, 6, 2 in time order
    expect(tableOf(rows).blocks.map((b) => b.label)).toEqual(["2", "6", "10"]);
    const timed = tableOf(rows, { timeOrdered: true });
    expect(timed.blocks.map((b) => b.label)).toEqual(["10", "6", "2"]);
    expect(timed.timeOrdered).toBe(true);
  });

  it("keeps the spread of data offset by 1e12 (precision, as sumsTable.ts promises)", () => {
    // Source: invariance to an added constant. The same rows with 1e12 added (exactly
    // representable here: rows rounded once at 1e12, the base taken back from them) must give the
    // same block-centred sums, cross − weight·offset·offsetᵀ, and the same differences of block
    // offsets; the centres differ (1e12 apart, and by the centre's own rounding), so the raw cross
    // sums about them differ by that rounding times the block's offset: compared is what a fit uses.
    const start = makeRows(5, 400, 3, true, 0);
    const shifted: Rows = { ...start, x: start.x.map((r) => r.map((v) => v + 1e12)), y: start.y.map((v) => v + 1e12) };
    const base: Rows = { ...start, x: shifted.x.map((r) => r.map((v) => v - 1e12)), y: shifted.y.map((v) => v - 1e12) };
    const a = tableOf(shifted);
    const b = tableOf(base);
    const p = 3;
    const centred = (block: SumsTable["blocks"][number], i: number, j: number): number => block.cross[upperIndex(p, i, j)] - block.weight * block.offset[i] * block.offset[j];
    for (let k = 0; k < a.blocks.length; k++) {
      const s = a.blocks[k];
      const t = b.blocks[k];
      for (let i = 0; i < p; i++) {
        for (let j = i; j < p; j++) {
          const size = Math.sqrt(centred(t, i, i) * centred(t, j, j));
          expect(Math.abs(centred(s, i, j) - centred(t, i, j))).toBeLessThanOrEqual(1e-12 * size);
        }
        expect(Math.abs(s.offset[i] - a.blocks[0].offset[i] - (t.offset[i] - b.blocks[0].offset[i]))).toBeLessThanOrEqual(1e-12 * Math.sqrt(centred(t, i, i) / t.weight));
      }
      const yCentred = (block: typeof s): number => block.yy - block.weight * block.offsetY * block.offsetY;
      expect(Math.abs(yCentred(s) - yCentred(t))).toBeLessThanOrEqual(1e-12 * yCentred(t));
    }
  });

  it("refuses values whose squares leave the range of doubles", () => {
    const rows = makeRows(2, 50, 2, false);
    rows.x.forEach((r) => (r[1] *= 1e160));
    expect(() => tableOf(rows)).toThrow(/'drum_rpm' is too large .* record it in other units/);
    const tiny = makeRows(2, 50, 2, false);
    tiny.x.forEach((r) => (r[0] *= 1e-160));
    expect(() => tableOf(tiny)).toThrow(/'bean_temp' is too small/);
  });

  it("refuses a block without positively weighted rows, and blank labels", () => {
    const rows = makeRows(2, 40, 2, true);
    rows.labels = rows.y.map((_, i) => (i < 5 ? "empty" : "full" + (i % 2)));
    rows.w = rows.y.map((_, i) => (i < 5 ? 0 : 1));
    expect(() => tableOf(rows)).toThrow(/fold label 'empty' has no rows with a positive weight/);
    const blank = makeRows(2, 40, 2, false);
    blank.labels[7] = " ";
    expect(() => tableOf(blank)).toThrow(/fold labels row 8 is blank/);
  });
});

describe("JSON and long forms", () => {
  it("round-trip bit for bit (fast-check over tables)", () => {
    fc.assert(
      fc.property(fc.integer({ min: 0, max: 1e6 }), fc.integer({ min: 1, max: 6 }), fc.boolean(), fc.boolean(), fc.integer({ min: 2, max: 6 }), (seed, p, weighted, time, blocks) => {
        const rows = makeRows(seed, 20 * blocks, p, weighted, seed % 3 === 0 ? 1e9 : 0, blocks);
        const table = tableOf(rows, { timeOrdered: time, skippedRows: seed % 5, blocking: "hash of 'roast_id' into folds", weightsName: "bag_count" });
        sameBits(parseSumsJSON(sumsToJSON(table)), table);
        sameBits(sumsFromLong(sumsToLong(table)), table);
        // The long form as text cells (what a worksheet or CSV gives back) reads the same numbers.
        const asText = sumsToLong(table).map((row) => row.map((cell) => (typeof cell === "number" ? ` ${String(cell)} ` : cell)));
        sameBits(sumsFromLong(asText), table);
      }),
      { numRuns: 40 },
    );
  });

  it("reads the long form in any row order, with a loose header, either pair order and blank rows", () => {
    const table = tableOf(makeRows(8, 90, 3, true));
    const long = sumsToLong(table);
    const random = new TestRandom(4);
    const body = long.slice(1);
    const order = random.permutation(body.length);
    // #block rows dropped: labels sort as text, the same order here.
    const shuffled = order.map((k) => body[k]).filter((row) => row[1] !== "#block");
    const flipped = shuffled.map((row) => (typeof row[1] === "string" && !row[1].startsWith("#") ? [row[0], row[2], row[1], row[3]] : row));
    const rows = [["Block", " Term A", "TERM_B", "Value "], ...flipped, [], ["", null, "", ""]];
    sameBits(sumsFromLong(rows as never), table);
  });

  it("accepts numbers as query rows (label numbers, bigint positions), deriving means when absent", () => {
    const rows = makeRows(9, 80, 2, false);
    rows.labels = rows.y.map((_, i) => i % 4);
    const table = tableOf(rows);
    const [header, ...body] = sumsToLong(table).filter((row) => row[1] !== "#mean");
    const long = [header, ...body.map((row) => [row[0] === "*" ? "*" : Number(row[0]), row[1], row[2] === "" ? null : row[2], row[3] === "" ? null : typeof row[3] === "number" && Number.isInteger(row[3]) && row[1] === "#rows" ? BigInt(row[3]) : row[3]])];
    const back = sumsFromLong(long as never);
    expect(back.blocks.map((b) => b.label)).toEqual(["0", "1", "2", "3"]);
    back.blocks.forEach((block, k) => {
      block.mean.forEach((m, j) => expect(Math.abs(m - table.blocks[k].mean[j])).toBeLessThanOrEqual(1e-14 * Math.abs(m)));
      sameBits(block.cross, table.blocks[k].cross);
    });
  });
});

describe("bad sums tables", () => {
  const good = (): SumsTable => tableOf(makeRows(1, 60, 2, false));
  const expectMessage = (make: () => unknown, pattern: RegExp): void => {
    let thrown: unknown = null;
    try {
      make();
    } catch (error) {
      thrown = error;
    }
    expect(thrown).toBeInstanceOf(InputError);
    expect((thrown as InputError).message).toMatch(pattern);
    expect((thrown as InputError).message).not.toMatch(/\n/);
  };
  it("says what to fix (checkSums)", () => {
    expectMessage(() => checkSums(null), /not a Shrinkwise sums table/);
    expectMessage(() => checkSums({ ...good(), format: "other" }), /its format is 'other', expected 'shrinkwise-sums'/);
    expectMessage(() => checkSums({ ...good(), version: 2 }), new RegExp(`version 2 and this Shrinkwise reads version ${SUMS_VERSION}`));
    expectMessage(() => checkSums({ ...good(), terms: ["a", "a"] }), /term 'a' appears twice/);
    expectMessage(() => checkSums({ ...good(), terms: ["#a", "b"] }), /term '#a' starts with '#'/);
    expectMessage(() => checkSums({ ...good(), target: "bean_temp" }), /'bean_temp' is both the target and a term/);
    // One block is a valid table (least squares from sums takes it); cross-validation refuses it (fitSums.ts).
    expect(checkSums({ ...good(), blocks: good().blocks.slice(0, 1) }).blocks).toHaveLength(1);
    expectMessage(() => checkSums({ ...good(), blocks: [] }), /the sums table has no blocks/);
    const t = good();
    expectMessage(() => checkSums({ ...t, blocks: [t.blocks[0], { ...t.blocks[1], label: t.blocks[0].label }] }), /block 'batch-0' appears twice/);
    // A block of weight 0 is valid (its rows all weigh 0); a negative weight, or no weight anywhere, is not.
    expectMessage(() => checkSums({ ...t, blocks: [t.blocks[0], { ...t.blocks[1], weight: -1 }] }), /block 'batch-1' has weight -1/);
    expectMessage(() => checkSums({ ...t, blocks: [{ ...t.blocks[0], weight: 0 }, { ...t.blocks[1], weight: 0 }] }), /every block of the sums table has weight 0/);
    expectMessage(() => checkSums({ ...t, blocks: [t.blocks[0], { ...t.blocks[1], rows: 0 }] }), /block 'batch-1' has 0 rows/);
    expectMessage(() => checkSums({ ...t, blocks: [t.blocks[0], { ...t.blocks[1], cross: [1, 2] }] }), /block 'batch-1' has 2 cross-products but 2 terms need 3/);
    expectMessage(() => checkSums({ ...t, blocks: [t.blocks[0], { ...t.blocks[1], crossY: [1, Infinity] }] }), /cross-products with the target of 'drum_rpm' is not a finite number/);
    expectMessage(() => checkSums({ ...t, blocks: [t.blocks[0], { ...t.blocks[1], offset: [t.blocks[1].offset[0], 1e6] }] }), /block 'batch-1': the spread of 'drum_rpm' is negative/);
    expectMessage(() => checkSums({ ...t, blocks: [t.blocks[0], { ...t.blocks[1], yy: -1 }] }), /block 'batch-1': the spread of 'weight_loss' is negative/);
    expectMessage(() => checkSums({ ...t, centre: { terms: [1], target: 0 } }), /the centre: 1 values, but the table has 2 terms/);
  });

  it("says what to fix (long form)", () => {
    const long = sumsToLong(good());
    const without = (pred: (row: (string | number)[]) => boolean): (string | number)[][] => long.filter((row, i) => i === 0 || !pred(row));
    const edit = (pred: (row: (string | number)[]) => boolean, value: string | number): (string | number)[][] => long.map((row, i) => (i > 0 && pred(row) ? [row[0], row[1], row[2], value] : row));
    expectMessage(() => sumsFromLong([]), /the sums table is empty/);
    expectMessage(() => sumsFromLong([["a", "b", "c", "d"]]), /first row must be the header block \| term_a \| term_b \| value/);
    expectMessage(() => sumsFromLong(edit((r) => r[1] === "#format", 2)), /version 2 and this Shrinkwise reads version 1/);
    expectMessage(() => sumsFromLong(without((r) => r[1] === "#format")), /no \* \| #format row/);
    expectMessage(() => sumsFromLong(without((r) => r[0] === "batch-2")), /block 'batch-2' is listed .* has no rows for it: the table is missing a block/);
    expectMessage(() => sumsFromLong(without((r) => r[0] === "batch-2" && r[1] === "#weight")), /block 'batch-2' has no #weight row/);
    expectMessage(() => sumsFromLong(without((r) => r[0] === "batch-2" && r[1] === "bean_temp" && r[2] === "drum_rpm")), /block 'batch-2' has no cross-product of 'bean_temp' and 'drum_rpm'/);
    expectMessage(() => sumsFromLong(edit((r) => r[0] === "batch-1" && r[1] === "#weight", "lots")), /sums table row \d+: block 'batch-1''s #weight is 'lots', not a number/);
    expectMessage(() => sumsFromLong([...long, ["batch-1", "drum_rpm", "bean_temp", 123.5]]), /cross-product of 'bean_temp' and 'drum_rpm' is .* but 123.5 the other way round .* must be symmetric/);
    expectMessage(() => sumsFromLong([...long, ["batch-1", "#weight", "", 3]]), /both give block 'batch-1' #weight/);
    expectMessage(() => sumsFromLong([...long, ["*", "#colour", "", 3]]), /unknown keyword #colour/);
    expectMessage(() => sumsFromLong([...long, ["batch-1", "roast_colour", "bean_temp", 3]]), /cross-product row for 'roast_colour', which is neither a term nor the target/);
    expectMessage(() => sumsFromLong(edit((r) => r[0] === "batch-0" && r[1] === "drum_rpm" && r[2] === "drum_rpm", -5)), /block 'batch-0': the spread of 'drum_rpm' is negative/);
    expectMessage(() => parseSumsJSON("{ not json"), /not valid JSON/);
  });
});
