/** The regularisers of a configuration besides L2 and dropout, in words for tables and reports. */
import type { TrialConfiguration } from './configuration.js';

const round = (value: number): string => String(Number(value.toPrecision(3)));

/** "weight decay 0.0002, gradient norm at most 1.5", or undefined for a configuration without any. */
export function regularisersInWords(configuration: TrialConfiguration): string | undefined {
  const parts: string[] = [];
  if (configuration.weightDecay !== undefined) parts.push(`weight decay ${round(configuration.weightDecay)}`);
  if (configuration.maxGradientNorm !== undefined) parts.push(`gradient norm at most ${round(configuration.maxGradientNorm)}`);
  if (configuration.labelSmoothing !== undefined) parts.push(`label smoothing ${round(configuration.labelSmoothing)}`);
  return parts.length > 0 ? parts.join(', ') : undefined;
}
