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
  const next = mulberry32(seed);
  const order = new Int32Array(rows);
  for (let i = 0; i < rows; i++) order[i] = i;
  for (let i = rows - 1; i > 0; i--) {
    const k = Math.floor(next() * (i + 1));
    const tmp = order[i];
    order[i] = order[k];
    order[k] = tmp;
  }
  const labels = new Int32Array(rows);
  for (let t = 0; t < rows; t++) labels[order[t]] = t % folds;
  return labels;
}
