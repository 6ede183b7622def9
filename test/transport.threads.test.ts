import { ThreadTransport } from '../src/transport/threads.js';
import { transportContract } from './transport.contract.js';

transportContract('worker threads', () => new ThreadTransport({ threads: 2 }));
