/**
 * Seeded pseudo-random numbers for fold assignment.
 *
 * Generator: Mulberry32 (a 32-bit state, 32-bit output generator by Tommy Ettinger,
 * public domain): state += 0x6D2B79F5, then two xor-shift-multiply rounds. It is not
 * cryptographic; it is fixed here so that the same seed gives the same folds on every
 * platform and in every version of Shrinkwise. Changing it changes users' results.
 */
export function mulberry32(seed: number): () => number {
  let state = seed >>> 0;
  return function next(): number {
    state = (state + 0x6d2b79f5) >>> 0;
    let t = state;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
}

/**
 * Random fold labels 0..folds-1 for `rows` rows: a Fisher–Yates shuffle of 0..rows-1
 * driven by Mulberry32(seed), then the row at shuffled position t goes to fold t mod folds.
 * Fold sizes therefore differ by at most one. Cost O(rows).
 *
 * @example randomFolds(6, 3, 1) // a permutation of [0, 1, 2, 0, 1, 2]
 */
export function randomFolds(rows: number, folds: number, seed: number): Int32Array {
  const order = shuffledRows(rows, seed);
  const labels = new Int32Array(rows);
  for (let t = 0; t < rows; t++) labels[order[t]] = t % folds;
  return labels;
}

/** 0..rows-1 in the order of a Fisher–Yates shuffle driven by Mulberry32(seed). Cost O(rows). */
function shuffledRows(rows: number, seed: number): Int32Array {
  const next = mulberry32(seed);
  const order = new Int32Array(rows);
  for (let i = 0; i < rows; i++) order[i] = i;
  for (let i = rows - 1; i > 0; i--) {
    const k = Math.floor(next() * (i + 1));
    const tmp = order[i];
    order[i] = order[k];
    order[k] = tmp;
  }
  return order;
}

/**
 * Stratified random fold labels (each fold gets its share of every stratum; common practice for
 * classification, Kohavi 1995, IJCAI, "A study of cross-validation and bootstrap for accuracy
 * estimation and model selection"): the same shuffle as randomFolds, then the strata are dealt in
 * turn (in increasing order of their values), each in shuffled order, round-robin into the folds,
 * the count running on from one stratum to the next. So every fold holds ⌊n_s/K⌋ or ⌈n_s/K⌉ rows
 * of each stratum s and fold sizes still differ by at most one. Deterministic for a seed. Cost O(rows log rows).
 *
 * @example stratifiedFolds(4, 2, 1, [0, 0, 1, 1]) // each fold gets one row of each stratum
 */
export function stratifiedFolds(rows: number, folds: number, seed: number, strata: ArrayLike<number>): Int32Array {
  if (strata.length !== rows) throw new RangeError(`stratifiedFolds requires one stratum per row; got ${strata.length} for ${rows} rows`);
  const order = shuffledRows(rows, seed);
  const values = Array.from(new Set(Array.from(strata))).sort((a, b) => a - b);
  const labels = new Int32Array(rows);
  let t = 0;
  for (const value of values) {
    for (let s = 0; s < rows; s++) {
      const i = order[s];
      if (strata[i] === value) labels[i] = t++ % folds;
    }
  }
  return labels;
}
