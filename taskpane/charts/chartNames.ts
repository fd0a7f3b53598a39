/**
 * Names the pane needs before any chart is drawn, kept apart from charts.ts so that importing them
 * does not pull echarts into the pane's first script (the charts load on demand, chartLibrary.ts).
 */

/**
 * The CV chart's x axis. Every mix is cross-validated on a grid of its own, from the top of
 * its grid (the weakest strength that zeroes every coefficient; ridge's is set as if α were
 * small but positive, so it sits far above the others) down to a fixed fraction of it. On one
 * λ axis the mixes' curves therefore start far apart and bunch at one side.
 * - "strength": the penalty strength λ itself, shared by all mixes;
 * - "fraction": each mix's λ divided by the top of its own grid, so every curve starts at 1.
 * FitResult carries the top of the chosen mix's grid only (path.top); every mix's top is the
 * first strength of its rows in the CV table (the grid runs from its top down), see gridTops.
 */
export type CvAxis = "strength" | "fraction";
export const CV_AXES: readonly CvAxis[] = ["strength", "fraction"];
/**
 * Chosen by looking at both on the demo data (five mixes). On the λ axis ridge's curve fills
 * the left half and the other four share the right half, but side by side, in the order of
 * their mixes, each one readable, with the marked points clear of the "+ 1 SE" label. Divided
 * by their tops, the four curves with α > 0 fall almost on top of one another (their tops are
 * what set them apart) and only ridge's stands out, stretched across the width.
 */
export const DEFAULT_CV_AXIS: CvAxis = "strength";
/** Short names of the two axes, for a control that switches between them. */
export const CV_AXIS_NAMES: Readonly<Record<CvAxis, string>> = { strength: "strength λ", fraction: "strength ÷ top of grid" };
