import { TRAINERS } from '../src/trainers/run-request.js';
import { trainerContract } from './trainers.contract.js';

for (const trainer of Object.values(TRAINERS)) trainerContract(trainer);
