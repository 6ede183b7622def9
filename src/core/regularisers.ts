/** The regularisers of a configuration besides L2 and dropout, in words for tables and reports. */
import type { TrialConfiguration } from './configuration.js';

/** Three significant digits; below 0.001 as a power of ten ("6.84e-6"), as the tables write L2. */
const round = (value: number): string =>
  value !== 0 && Math.abs(value) < 1e-3 ? value.toExponential(2).replace(/\.?0+e/, 'e') : String(Number(value.toPrecision(3)));

/** "weight decay 0.0002, gradient norm at most 1.5", or undefined for a configuration without any. */
export function regularisersInWords(configuration: TrialConfiguration): string | undefined {
  const parts: string[] = [];
  if (configuration.weightDecay !== undefined) parts.push(`weight decay ${round(configuration.weightDecay)}`);
  if (configuration.maxGradientNorm !== undefined) parts.push(`gradient norm at most ${round(configuration.maxGradientNorm)}`);
  if (configuration.labelSmoothing !== undefined) parts.push(`label smoothing ${round(configuration.labelSmoothing)}`);
  return parts.length > 0 ? parts.join(', ') : undefined;
}
