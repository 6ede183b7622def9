import { FoldsTransport } from '../src/transports/folds.js';
import { ThreadTransport } from '../src/transports/threads/transport.js';
import { syntheticDataset } from './helpers/synthetic.js';
import { transportContract } from './transport.contract.js';

transportContract('worker threads', () => new ThreadTransport({ threads: 2 }));

// The k-fold wrapper keeps the same promises over the transport it wraps (here 3 fold data sets on 2 threads).
transportContract('folds over worker threads', () =>
  new FoldsTransport(
    new ThreadTransport({ threads: 2 }),
    [6, 7, 8].map((seed) => syntheticDataset({ task: 'binary', rows: 96, inputs: 3, seed })),
  ),
);
