import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { compileSpec, renderSvg } from '../src/plot/render.js';
import { scopeSvgIds } from '../src/plot/report.js';
import { studyCharts } from '../src/plot/specs.js';
import type { StudyDocument } from '../src/store/types.js';
import { studyFixture } from './helpers/study-fixtures.js';

const fixture = studyFixture;

/** Items drawn per vega mark type: vega writes each mark as `<g class="mark-<type> role-mark">` holding one element per item. */
function drawnMarks(svg: string): Record<string, number> {
  const counts: Record<string, number> = {};
  for (const match of svg.matchAll(/<g class="mark-(\w+) role-mark[^"]*"[^>]*>(.*?)<\/g>/gs)) {
    const items = match[2]!.match(/<(path|line|text|rect)\b/g)?.length ?? 0;
    counts[match[1]!] = (counts[match[1]!] ?? 0) + items;
  }
  return counts;
}

async function renderAll(study: StudyDocument): Promise<Record<string, string>> {
  const svgs: Record<string, string> = {};
  for (const chart of studyCharts(study)) svgs[chart.name] = await renderSvg(chart.spec);
  return svgs;
}

describe('rendering to SVG', () => {
  it('draws every chart of every fixture with marks and no NaN', async () => {
    for (const name of ['random-five', 'halving-nine', 'hyperband-generated']) {
      const svgs = await renderAll(fixture(name));
      for (const [chart, svg] of Object.entries(svgs)) {
        expect(svg.startsWith('<svg'), `${name}/${chart}`).toBe(true);
        expect(svg, `${name}/${chart}`).not.toContain('NaN');
        expect(Object.values(drawnMarks(svg)).reduce((a, b) => a + b, 0), `${name}/${chart}`).toBeGreaterThan(0);
      }
    }
  });

  it('draws one chart per question, the top five curves and a median, and hover titles on points', async () => {
    const svgs = await renderAll(fixture('halving-nine'));
    expect(Object.keys(svgs)).toEqual(['budget', 'rung-agreement', 'hyperparameters', 'learning-curves']);
    // Six lines: the five of the top five and the median of all nine trials; one band.
    expect(drawnMarks(svgs['learning-curves']!)).toMatchObject({ line: 6, area: 1 });
    // The winner's curve ends with a star, and its points can be hovered.
    expect(svgs['learning-curves']).toContain('<title>');
    expect(svgs['learning-curves']).toMatch(/<title>[^<]*#1 trial 5/);
  });

  it('compiles every chart of every fixture without a Vega-Lite warning', () => {
    // The collector does hear warnings: a bar cannot take a shape channel.
    const dropped = compileSpec({ data: { values: [{ a: 'x' }] }, mark: 'bar', encoding: { shape: { field: 'a', type: 'nominal' } } });
    expect(dropped.warnings.join()).toMatch(/shape/);
    for (const name of ['random-five', 'halving-nine', 'hyperband-generated']) {
      for (const chart of studyCharts(fixture(name))) expect(compileSpec(chart.spec).warnings, `${name}/${chart.name}`).toEqual([]);
    }
  });

  it('prefixes the ids inside an SVG so several charts can share one page', () => {
    const svg = '<svg><defs><clipPath id="clip1"><path/></clipPath></defs><g clip-path="url(#clip1)"><use href="#clip1"/></g></svg>';
    expect(scopeSvgIds(svg, 'progress')).toBe(
      '<svg><defs><clipPath id="progress-clip1"><path/></clipPath></defs><g clip-path="url(#progress-clip1)"><use href="#progress-clip1"/></g></svg>',
    );
  });
});
