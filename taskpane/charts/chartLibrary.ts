/**
 * The chart library, loaded when a chart is first needed: echarts and our chart modules
 * (charts.ts, assuranceCharts.ts) form their own chunk, charts.js (webpackChunkName "charts"),
 * which the page fetches from its own origin on first use instead of with its first script.
 * echarts is most of the pane's code by size; without it taskpane.js stays under webpack's 600 KiB
 * advisory and the pane (and the cell functions' shared page) starts sooner. The pane starts the
 * load when a fit starts, so the charts are ready when its results are.
 *
 * Only this file may import charts.ts or assuranceCharts.ts for their values (type imports are
 * free); test/addin/build.test.ts checks echarts is not in taskpane.js or functions.js.
 */
import type { describeAssuranceChart, mountAssuranceChart } from "./assuranceCharts";
import type { mountChart, mountSeriesChart } from "./charts";

/** What the pane, the sums panel and the stand-in sheet draw with. */
export interface ChartLibrary {
  mountChart: typeof mountChart;
  mountSeriesChart: typeof mountSeriesChart;
  mountAssuranceChart: typeof mountAssuranceChart;
  describeAssuranceChart: typeof describeAssuranceChart;
}

let loading: Promise<ChartLibrary> | null = null;
let loaded: ChartLibrary | null = null;

/** Loads the chart chunk once (a failed load is tried again on the next call). */
export function loadChartLibrary(): Promise<ChartLibrary> {
  loading ??= Promise.all([import(/* webpackChunkName: "charts" */ "./charts"), import(/* webpackChunkName: "charts" */ "./assuranceCharts")]).then(
    ([charts, assurance]) => {
      loaded = {
        mountChart: charts.mountChart,
        mountSeriesChart: charts.mountSeriesChart,
        mountAssuranceChart: assurance.mountAssuranceChart,
        describeAssuranceChart: assurance.describeAssuranceChart,
      };
      return loaded;
    },
    (error: unknown) => {
      loading = null;
      throw error;
    },
  );
  return loading;
}

/** The library when it has loaded, else null (callers then wait for loadChartLibrary()). */
export function chartLibraryNow(): ChartLibrary | null {
  return loaded;
}
