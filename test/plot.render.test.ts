import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { compileSpec, renderSvg } from '../src/plot/render.js';
import { scopeSvgIds } from '../src/plot/report.js';
import { studyCharts } from '../src/plot/specs.js';
import type { StudyDocument } from '../src/store/types.js';

function fixture(name: string): StudyDocument {
  return JSON.parse(readFileSync(new URL(`./fixtures/studies/${name}.json`, import.meta.url), 'utf8')) as StudyDocument;
}

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
  it('draws every chart of a random study with its points and lines, and no NaN', async () => {
    const svgs = await renderAll(fixture('random-five'));
    for (const [name, svg] of Object.entries(svgs)) {
      expect(svg.startsWith('<svg'), name).toBe(true);
      expect(svg, name).not.toContain('NaN');
    }
    // 4 scored trials (trial 4 diverged) and one best-so-far line.
    expect(drawnMarks(svgs['progress']!)).toMatchObject({ symbol: 4, line: 1 });
    // One curve and one end dot per trial, the diverged one included.
    expect(drawnMarks(svgs['learning-curves']!)).toMatchObject({ line: 5, symbol: 5 });
    // 8 panels of 4 scored trials each.
    expect(drawnMarks(svgs['parameters']!)).toMatchObject({ symbol: 32 });
    // 4 trial lines across 9 axes (8 hyperparameters and the objective), one rule per axis.
    expect(drawnMarks(svgs['parallel']!)).toMatchObject({ line: 4, rule: 9 });
  });

  it('draws one bar and one count per rung of a halving study', async () => {
    const svgs = await renderAll(fixture('halving-nine'));
    expect(Object.keys(svgs)).toEqual(['progress', 'learning-curves', 'parameters', 'parallel', 'rungs']);
    expect(drawnMarks(svgs['rungs']!)).toMatchObject({ rect: 3, text: 3 });
    expect(svgs['rungs']).toContain('>configurations<');
    expect(drawnMarks(svgs['learning-curves']!)).toMatchObject({ line: 9, symbol: 9 });
    for (const svg of Object.values(svgs)) expect(svg).not.toContain('NaN');
  });

  it('draws a Hyperband study with one rung panel per bracket', async () => {
    const svgs = await renderAll(fixture('hyperband-generated'));
    // Brackets 3, 2, 1, 0 have 4, 3, 2 and 1 rungs.
    expect(drawnMarks(svgs['rungs']!)).toMatchObject({ rect: 10, text: 10 });
    for (const [name, svg] of Object.entries(svgs)) {
      expect(svg, name).not.toContain('NaN');
      expect(Object.values(drawnMarks(svg)).reduce((a, b) => a + b, 0), name).toBeGreaterThan(0);
    }
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
