// The preprocessing recipe of configuration.json applied to one row, without rungwise: the same
// rules as rungwise's own encoding. Works in Node and in a browser (no imports).
const MISSING = new Set(['', 'na', 'n/a', 'nan', 'null', '?']);
const isMissing = (value) => value === null || value === undefined || MISSING.has(String(value).trim().toLowerCase());

/** One row (column name -> value) to the network's inputs, in the order of configuration.inputs. */
export function encodeRow(recipe, row) {
  const inputs = [];
  for (const feature of recipe.features) {
    const value = row[feature.name];
    if (feature.kind === 'numeric') {
      // Standardised with the training split's mean and std; a missing value becomes the mean (0).
      inputs.push(isMissing(value) ? 0 : (Number(value) - feature.mean) / feature.std);
    } else {
      // One-hot over the training categories; missing -> the most frequent one, unseen -> all zeros.
      const category = isMissing(value) ? feature.fill : String(value);
      for (const known of feature.categories) inputs.push(known === category ? 1 : 0);
    }
  }
  return inputs;
}
