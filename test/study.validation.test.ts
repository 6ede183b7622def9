import { mkdtemp, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { describe, expect, it } from 'vitest';
import { UserError } from '../src/core/errors.js';
import { loadStudy, validateStudy } from '../src/study/load.js';
import { resolveGoal } from '../src/study/definition.js';

const valid = {
  name: 'pumps',
  data: { csv: 'pumps.csv', target: 'fails', task: 'binary' },
  space: {
    depth: { min: 1, max: 3 },
    width: { min: 8, max: 64, log: true },
    activation: ['relu', 'tanh'],
    learningRate: { min: 1e-4, max: 0.1 },
  },
  budget: { trials: 8, maxEpochs: 10 },
};

function errorOf(raw: unknown): UserError {
  try {
    validateStudy(raw, 'study.json');
  } catch (error) {
    if (error instanceof UserError) return error;
    throw error;
  }
  throw new Error('expected a UserError');
}

function withChange(change: (copy: Record<string, any>) => void): unknown {
  const copy = structuredClone(valid) as Record<string, any>;
  change(copy);
  return copy;
}

describe('study definition validation', () => {
  it('applies defaults to a minimal valid definition', () => {
    const definition = validateStudy(valid, 'study.json');
    expect(definition.sampler).toEqual({ kind: 'random', seed: 0 });
    expect(definition.data.validationFraction).toBe(0.2);
    expect(definition.data.testFraction).toBe(0.15);
    expect(definition.space.optimizer).toEqual(['adam']);
    expect(definition.space.batchSize).toEqual([32]);
    expect(definition.retries).toBe(0);
  });

  it('accepts log: true and log: false on the learning rate, L2 and dropout ranges, and keeps a definition without log as written', () => {
    const scaled = validateStudy(withChange((d) => {
      d.space.learningRate.log = true;
      d.space.l2 = { min: 1e-6, max: 1e-2, log: false };
      d.space.dropout = { min: 0.05, max: 0.5, log: true };
    }), 'study.json');
    expect(scaled.space.learningRate.log).toBe(true);
    expect(scaled.space.l2?.log).toBe(false);
    expect(scaled.space.dropout?.log).toBe(true);
    expect('log' in validateStudy(valid, 'study.json').space.learningRate).toBe(false);
  });

  it('accepts configurations to try first and names a listed configuration that lacks what the space\'s schedule draws', () => {
    const first = { depth: 2, width: 32, activation: 'relu', learningRate: 0.001, batchSize: 32 };
    expect(validateStudy(withChange((d) => (d.tryFirst = [first])), 'study.json').tryFirst?.[0]).toEqual({ ...first, optimizer: 'adam', l2: 0, dropout: 0 });
    const error = errorOf(withChange((d) => {
      d.space.schedule = { kind: ['cosine'] };
      d.tryFirst = [first];
    }));
    expect(error.message).toBe("study.json: tryFirst[0]: lacks schedule, warmupEpochs, minFactor, which this space's schedule draws; give them");
  });

  it('names the file, the JSON path, what was found and what is allowed', () => {
    const error = errorOf(withChange((d) => (d.space.learningRate.min = -1)));
    expect(error.code).toBe('E_STUDY_INVALID');
    expect(error.message).toBe('study.json: space.learningRate.min: found -1, expected a number > 0');
  });

  it('suggests the nearest valid key for a misspelt one', () => {
    const error = errorOf(withChange((d) => (d.space.learningrate = d.space.learningRate)));
    expect(error.message.split('\n')[0]).toMatch(/^study\.json: space\.learningrate: unknown key \(did you mean 'learningRate'\?\)/);
  });

  it('suggests keys inside the chosen sampler kind', () => {
    const error = errorOf(withChange((d) => (d.sampler = { kind: 'hyperband', etta: 3 })));
    expect(error.message).toContain("sampler.etta: unknown key (did you mean 'eta'?)");
  });

  it('lists the allowed activations for an unknown one', () => {
    const error = errorOf(withChange((d) => (d.space.activation = ['relu', 'swishy'])));
    expect(error.message).toMatch(/^study\.json: space\.activation\[1\]: found "swishy", expected one of "relu", "leakyRelu"/);
  });

  it('gives one line per violation', () => {
    const error = errorOf(withChange((d) => {
      d.budget.maxEpochs = 0;
      d.data.task = 'ranking';
    }));
    const lines = error.message.split('\n');
    expect(lines).toHaveLength(2);
    expect(lines).toContain('study.json: data.task: found "ranking", expected one of "binary", "multiclass", "regression"');
    expect(lines).toContain('study.json: budget.maxEpochs: found 0, expected a number >= 1');
  });

  it('rejects min above max', () => {
    const error = errorOf(withChange((d) => (d.space.depth = { min: 4, max: 2 })));
    expect(error.message).toBe('study.json: space.depth.min: found 4, expected at most max (2)');
  });

  it('rejects a whole-number field given a fraction', () => {
    const error = errorOf(withChange((d) => (d.budget.trials = 2.5)));
    expect(error.message).toBe('study.json: budget.trials: found 2.5, expected a whole number');
  });

  it('reports a missing required field', () => {
    const error = errorOf(withChange((d) => delete d.data.target));
    expect(error.message).toBe('study.json: data.target: missing, expected a string');
  });

  it('rejects a goal metric the task does not report', () => {
    const error = errorOf(withChange((d) => (d.goal = { metric: 'rmse' })));
    expect(error.message).toMatch(/^study\.json: goal\.metric: found "rmse", expected for a binary task one of "accuracy"/);
  });

  it('rejects a "better" other than higher or lower', () => {
    const error = errorOf(withChange((d) => (d.goal = { metric: 'auc', better: 'maximize' })));
    expect(error.message).toMatch(/^study\.json: goal\.better: found "maximize", expected one of "higher", "lower"/);
  });

  it('rejects validation and test fractions that leave too little for training', () => {
    const error = errorOf(withChange((d) => Object.assign(d.data, { validationFraction: 0.5, testFraction: 0.45 })));
    expect(error.message).toMatch(/^study\.json: data\.validationFraction: validation \(0\.5\) and test \(0\.45\) fractions add up to more than 0\.9/);
  });

  it('picks a sensible goal per task', () => {
    const base = validateStudy(valid, 'study.json');
    expect(resolveGoal(base)).toEqual({ metric: 'auc', better: 'higher' });
    expect(resolveGoal({ ...base, data: { ...base.data, task: 'multiclass' } })).toEqual({ metric: 'accuracy', better: 'higher' });
    expect(resolveGoal({ ...base, data: { ...base.data, task: 'regression' } })).toEqual({ metric: 'rmse', better: 'lower' });
    expect(resolveGoal({ ...base, goal: { metric: 'logLoss' } })).toEqual({ metric: 'logLoss', better: 'lower' });
  });
});

describe('reading a study definition file', () => {
  it('names the line and column of a JSON syntax error', async () => {
    const dir = await mkdtemp(path.join(tmpdir(), 'rungwise-study-'));
    const file = path.join(dir, 'broken.json');
    await writeFile(file, '{\n  "name": "x",\n  "data": }\n');
    await expect(loadStudy(file)).rejects.toThrow(`${file}: line 3, column 11: not valid JSON (ValueExpected)`);
  });

  it('says so when the file does not exist', async () => {
    await expect(loadStudy('/nonexistent/study.json')).rejects.toThrow('/nonexistent/study.json: cannot read the study definition (no such file)');
  });

  it('says so when the file is empty', async () => {
    const dir = await mkdtemp(path.join(tmpdir(), 'rungwise-study-'));
    const file = path.join(dir, 'empty.json');
    await writeFile(file, '');
    await expect(loadStudy(file)).rejects.toThrow(`${file}: the file is empty`);
  });
});

describe('a definition written with the old key names', () => {
  const old = { ...valid, objective: { metric: 'logLoss', direction: 'minimize' } };

  async function written(definition: unknown): Promise<string> {
    const dir = await mkdtemp(path.join(tmpdir(), 'rungwise-study-'));
    const file = path.join(dir, 'old.json');
    await writeFile(file, JSON.stringify(definition));
    return file;
  }

  it('reads objective as goal and direction as better, with one note naming the file and what to rename', async () => {
    const file = await written(old);
    const { definition, notes } = await loadStudy(file);
    expect(definition.goal).toEqual({ metric: 'logLoss', better: 'lower' });
    expect(definition).not.toHaveProperty('objective');
    expect(notes).toEqual([`${file}: "objective" is the key's old name; it was read as "goal"; rename it to "goal" and its "direction": "minimize" to "better": "lower"`]);
  });

  it('reads direction "maximize" as better "higher", and an objective without a direction as a goal', async () => {
    expect((await loadStudy(await written({ ...valid, objective: { metric: 'auc', direction: 'maximize' } }))).definition.goal).toEqual({ metric: 'auc', better: 'higher' });
    const bare = await loadStudy(await written({ ...valid, objective: { metric: 'accuracy' } }));
    expect(bare.definition.goal).toEqual({ metric: 'accuracy' });
    expect(bare.notes).toEqual([`${bare.file}: "objective" is the key's old name; it was read as "goal"; rename it to "goal"`]);
  });

  it('gives a new definition no note', async () => {
    expect((await loadStudy(await written({ ...valid, goal: { metric: 'auc' } }))).notes).toEqual([]);
  });

  it('names an old key beside the new one as unknown', () => {
    const error = errorOf({ ...valid, goal: { metric: 'auc' }, objective: { metric: 'auc' } });
    expect(error.message).toMatch(/^study\.json: objective: unknown key/);
  });

  it('names the new field when an old direction has a value neither name allows', () => {
    const error = errorOf({ ...valid, objective: { metric: 'auc', direction: 'up' } });
    expect(error.message).toMatch(/^study\.json: goal\.better: found "up", expected one of "higher", "lower"/);
  });
});
