/**
 * One piece of the live progress line. When the line is too long, pieces give way one step at a time,
 * cheapest step first: taking the shorter form costs `shortCost`, leaving the piece out costs `dropCost`.
 */
export interface LineSegment {
  text: string;
  short?: string;
  /** Cost of taking the short form. @default dropCost */
  shortCost?: number;
  /** Cost of leaving the piece out; the most costly piece is never left out. */
  dropCost: number;
}

/**
 * Joins segments into a line of at most `width` characters, giving way cheapest step first (a
 * shortening before a drop of the same cost). The costliest segment is always kept, cut to the width
 * if it alone is too long.
 */
export function fitLine(segments: readonly LineSegment[], width: number, separator = '  '): string {
  const parts = segments.map((segment) => ({ segment, shown: segment.text as string | undefined }));
  const kept = Math.max(...segments.map((s) => s.dropCost));
  const join = (): string => parts.flatMap((part) => (part.shown === undefined ? [] : [part.shown])).join(separator);
  while (join().length > width) {
    let best: { cost: number; apply: () => void } | undefined;
    for (const part of parts) {
      const { segment } = part;
      if (part.shown === undefined) continue;
      const steps: { cost: number; apply: () => void }[] = [];
      if (segment.short !== undefined && part.shown !== segment.short) steps.push({ cost: segment.shortCost ?? segment.dropCost, apply: () => (part.shown = segment.short) });
      if (segment.dropCost < kept) steps.push({ cost: segment.dropCost + 0.001, apply: () => (part.shown = undefined) });
      for (const step of steps) if (!best || step.cost < best.cost) best = step;
    }
    if (!best) break;
    best.apply();
  }
  return join().slice(0, width);
}
