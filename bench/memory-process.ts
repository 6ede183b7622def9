/** Child-process entry of the memory benchmark: measures, sends the GroupResult to the parent, exits. */
import { measureMemory } from './memory.js';

const result = await measureMemory({ quick: process.argv.includes('--quick') });
process.send!(result, () => process.exit(0));
