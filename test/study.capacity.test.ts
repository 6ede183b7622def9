import { describe, expect, it } from 'vitest';
import { checkCapacity, parameterCount, trainingBytes, WASM_BYTES } from '../src/study/capacity.js';
import { studySchema, type StudyDefinition } from '../src/study/definition.js';

const GiB = 2 ** 30;

function study(overrides: { width?: number; depth?: number; trials?: number; maxEpochs?: number; batchSize?: number[] } = {}): StudyDefinition {
  return studySchema.parse({
    name: 'capacity',
    data: { csv: 'data.csv', target: 'y', task: 'binary' },
    space: {
      depth: { min: 1, max: overrides.depth ?? 2 },
      width: { min: 4, max: overrides.width ?? 64 },
      activation: ['relu'],
      learningRate: { min: 0.001, max: 0.1 },
      batchSize: overrides.batchSize ?? [32],
    },
    budget: { trials: overrides.trials ?? 20, maxEpochs: overrides.maxEpochs ?? 10 },
    threads: 2,
  });
}

describe('sizes checked against the machine before the first trial', () => {
  it('counts the weights and biases of an MLP', () => {
    // Common practice (no source): a dense layer from a to b units has a*b weights and b biases.
    // 4 inputs -> 3 -> 3 -> 2 outputs: (4*3+3) + (3*3+3) + (3*2+2) = 15 + 12 + 8.
    expect(parameterCount(4, 2, 3, 2)).toBe(35);
    expect(parameterCount(10, 1, 5, 1)).toBe(10 * 5 + 5 + 5 + 1);
  });

  it('accepts an ordinary study', () => {
    expect(() => checkCapacity({ definition: study(), inputCount: 20, outputCount: 1, availableBytes: 4 * GiB }, 'study.json')).not.toThrow();
  });

  it('rejects a width no trial can allocate, naming space.width and the largest width that fits', () => {
    const check = (): void => checkCapacity({ definition: study({ width: 100_000 }), inputCount: 20, outputCount: 1, availableBytes: 16 * GiB }, 'study.json');
    expect(check).toThrow(/^study\.json: space\.width: max 100000 at depth up to 2 \(20 inputs, batch 32\) gives 10,002,300,001 parameters, about 149\.\d GiB per trial while training; /);
    let message = '';
    try {
      check();
    } catch (error) {
      message = (error as Error).message;
    }
    const fits = Number(/keep width\.max at or below (\d+)/.exec(message)?.[1]);
    // 16 GiB for 2 threads is 8 GiB each, above the 4 GiB a wasm memory holds: the wasm limit decides.
    expect(message).toContain("one thread's wasm memory holds at most 4.0 GiB");
    expect(trainingBytes(20, 2, fits, 1, 32)).toBeLessThanOrEqual(WASM_BYTES);
    expect(trainingBytes(20, 2, fits + 1, 1, 32)).toBeGreaterThan(WASM_BYTES);
  });

  it('divides the available memory between the threads', () => {
    // About 0.96 GiB per trial: one worker in 8 GiB fits, sixteen (0.5 GiB each) do not.
    const definition = study({ width: 8_000 });
    expect(() => checkCapacity({ definition, inputCount: 20, outputCount: 1, availableBytes: 8 * GiB, threads: 1 }, 'study.json')).not.toThrow();
    expect(() => checkCapacity({ definition, inputCount: 20, outputCount: 1, availableBytes: 8 * GiB, threads: 16 }, 'study.json')).toThrow(/this machine has 8\.0 GiB available for 16 threads/);
  });

  it('rejects a budget whose results cannot be held, naming budget.trials and the most that fit', () => {
    const check = (): void => checkCapacity({ definition: study({ trials: 1e9, maxEpochs: 20 }), inputCount: 20, outputCount: 1, availableBytes: 16 * GiB }, 'study.json');
    expect(check).toThrow(/^study\.json: budget\.trials: 1,000,000,000 trials of up to 20 epochs would keep about [\d.]+ GiB of results in memory; this machine has 16\.0 GiB available and a study may use half of it: at most [\d,]+ trials of 20 epochs$/);
  });
});
