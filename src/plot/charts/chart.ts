import type { TopLevelSpec } from 'vega-lite';

/** One chart of the report: a file name, a heading, and its Vega-Lite specification with data inlined. */
export interface Chart {
  /** File stem, e.g. `budget` for `budget.svg`. */
  name: string;
  /** Heading in the report. */
  title: string;
  spec: TopLevelSpec;
}

export const VEGA_LITE_SCHEMA = 'https://vega.github.io/schema/vega-lite/v6.json';

/** Shared look: plain system fonts (nothing fetched), light grid, white background for the SVG files. */
export const CHART_CONFIG = {
  font: 'Helvetica, Arial, sans-serif',
  background: 'white',
  view: { stroke: '#d0d4d9' },
  axis: { labelFontSize: 11, titleFontSize: 12, gridColor: '#eceef1' },
  legend: { labelFontSize: 11, titleFontSize: 12, titleLimit: 240, labelLimit: 240 },
  title: { fontSize: 14, subtitleFontSize: 11, subtitleColor: '#555', anchor: 'start' as const },
};

/** The parts of a chart's specification besides its title, schema and shared look. */
export type ChartBody = TopLevelSpec extends infer Spec ? (Spec extends unknown ? Omit<Spec, '$schema' | 'title' | 'config'> : never) : never;

/** A chart with its title and subtitle drawn at the top, in the shared look (`config` adds to it). */
export function titledChart(name: string, title: string, subtitle: string | string[], body: ChartBody, config: object = {}): Chart {
  return { name, title, spec: { $schema: VEGA_LITE_SCHEMA, title: { text: title, subtitle }, ...body, config: { ...CHART_CONFIG, ...config } } as TopLevelSpec };
}

type LayerOf<Spec> = Spec extends { layer: (infer Layer)[] } ? Layer : never;
/** One layer of a layered chart. */
export type ChartLayer = LayerOf<TopLevelSpec>;
