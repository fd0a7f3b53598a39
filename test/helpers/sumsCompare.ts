/**
 * Comparing two sums tables of the same rows that may be about different centres (each engine
 * finds its own centre in its first pass, in its own summation order, so centres can differ in
 * the last bits).
 *
 * Each block is read in a form that does not depend on the centre (from the definitions in
 * engine/sumsTable.ts): the block's weight and rows, its means (centre + offset), and its own
 * centred cross-products cross − weight·offset_a·offset_b (= Σw(x_a − m_a)(x_b − m_b), since
 * Σw(x − c) = weight·offset). Each entry is compared against its natural scale: a cross-product
 * against √(M_aa·M_bb) (its Cauchy–Schwarz bound), a mean against the block's spread √(M_aa/weight).
 */
import { upperIndex, type SumsBlock, type SumsTable } from "../../engine/sumsTable";

interface Centred {
  weight: number;
  rows: number;
  /** Means of the terms, then the target's. */
  mean: number[];
  /** Block-centred cross-products among terms and target (target last), full (p+1)², row by row. */
  own: number[];
}

function centred(table: SumsTable, block: SumsBlock): Centred {
  const p = table.terms.length;
  const q = p + 1;
  const offset = [...block.offset, block.offsetY];
  const centre = [...table.centre.terms, table.centre.target];
  const raw = (a: number, b: number): number => {
    if (a < p && b < p) return block.cross[upperIndex(p, a, b)];
    if (a === p && b === p) return block.yy;
    return block.crossY[Math.min(a, b)];
  };
  const own = new Array<number>(q * q);
  for (let a = 0; a < q; a++) for (let b = 0; b < q; b++) own[a * q + b] = raw(a, b) - block.weight * offset[a] * offset[b];
  return { weight: block.weight, rows: block.rows, mean: offset.map((o, a) => centre[a] + o), own };
}

/**
 * The largest gap between tables `a` and `b`, each entry relative to its natural scale (see the
 * file comment); Infinity when their terms, target, blocks or row counts differ.
 */
export function sumsGap(a: SumsTable, b: SumsTable): number {
  if (a.terms.join("\u0000") !== b.terms.join("\u0000") || a.target !== b.target) return Infinity;
  if (a.blocks.map((k) => k.label).join("\u0000") !== b.blocks.map((k) => k.label).join("\u0000")) return Infinity;
  if (a.skippedRows !== b.skippedRows) return Infinity;
  const q = a.terms.length + 1;
  let worst = 0;
  const note = (x: number, y: number, scale: number) => {
    const g = Math.abs(x - y) / (scale > 0 ? scale : 1);
    worst = Number.isNaN(g) ? Infinity : Math.max(worst, g);
  };
  a.blocks.forEach((blockA, k) => {
    const x = centred(a, blockA);
    const y = centred(b, b.blocks[k]);
    if (x.rows !== y.rows) worst = Infinity;
    note(x.weight, y.weight, y.weight);
    for (let i = 0; i < q; i++) {
      note(x.mean[i], y.mean[i], Math.sqrt(y.own[i * q + i] / y.weight));
      for (let j = 0; j < q; j++) note(x.own[i * q + j], y.own[i * q + j], Math.sqrt(y.own[i * q + i] * y.own[j * q + j]));
    }
  });
  return worst;
}
