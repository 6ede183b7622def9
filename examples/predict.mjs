// Predict new rows with an exported model, preprocessing included.
// node examples/predict.mjs [export folder] [rows.json]
import { readFile } from 'node:fs/promises';
import { loadModel, predict } from 'rungwise';

const [dir = 'runs/demo/export/rank-1', rowsFile = 'examples/demo-rows.json'] = process.argv.slice(2);
const rows = JSON.parse(await readFile(rowsFile, 'utf8'));

const model = await loadModel(dir); // configuration.json + model.json + weights.bin
try {
  // Scaling, one-hot encoding, filling of missing values (null) and the decision threshold are applied.
  const answers = predict(model, rows);
  console.log(JSON.stringify(answers));
} finally {
  model.dispose();
}
