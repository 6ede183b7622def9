import * as vega from 'vega';
import { compile, type TopLevelSpec } from 'vega-lite';

/** A Vega-Lite specification compiled to Vega, with whatever the compiler warned about. */
export function compileSpec(spec: TopLevelSpec): { vegaSpec: vega.Spec; warnings: string[] } {
  const warnings: string[] = [];
  // Warnings are collected rather than printed: they point at a chart-building bug, which the tests catch.
  const logger = vega.logger(vega.Warn, 'warn', (_method, _level, args) => warnings.push(args.map(String).join(' ')));
  return { vegaSpec: compile(spec, { logger }).spec, warnings };
}

/**
 * Draws a Vega-Lite specification to SVG text in Node. SVG needs no canvas: vega's headless
 * renderer writes the markup itself and estimates text widths.
 */
export async function renderSvg(spec: TopLevelSpec): Promise<string> {
  const view = new vega.View(vega.parse(compileSpec(spec).vegaSpec), { renderer: 'none', logLevel: vega.Error });
  try {
    return await view.toSVG();
  } finally {
    view.finalize();
  }
}
