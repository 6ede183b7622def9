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
    return addHoverTitles(await view.toSVG());
  } finally {
    view.finalize();
  }
}

/** Kinds of mark items whose description is worth showing on hover (a line's describes only its first point). */
const HOVERED_ROLES = new Set(['point', 'bar', 'tick', 'rect mark', 'area mark', 'rule mark']);

/**
 * The page loads no script (its content security policy forbids it), so a mark's tooltip reaches
 * the reader as an SVG `<title>`, which browsers show on hover. Vega-Lite writes each item's
 * tooltip (or, without one, its encoded fields) as its `aria-label`; this copies that label into
 * a `<title>` child of every item of the kinds in {@link HOVERED_ROLES}.
 */
export function addHoverTitles(svg: string): string {
  return svg.replace(/<(path|rect|circle|line|g)\b([^>]*?)(\/?)>/g, (whole, tag: string, attributes: string, selfClosing: string) => {
    const role = /aria-roledescription="([^"]*)"/.exec(attributes)?.[1];
    const label = /aria-label="([^"]*)"/.exec(attributes)?.[1];
    if (!role || !label || !HOVERED_ROLES.has(role)) return whole;
    // The label is already escaped for an attribute, which is also valid element text.
    return selfClosing ? `<${tag}${attributes}><title>${label}</title></${tag}>` : `${whole}<title>${label}</title>`;
  });
}
