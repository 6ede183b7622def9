/**
 * The fault drill (`scripts/fault-drill.ts`, `npm run drill`) as CI runs it: a real redis-server with
 * its append-only file, a coordinator and two workers as processes; a worker killed, Redis restarted,
 * a worker stopped past its stall time, a malformed registry entry and a forged completion injected;
 * the ranking must equal the undisturbed run's.
 */
import { afterAll, describe, expect, it } from 'vitest';
import { faultDrill } from '../scripts/fault-drill.js';
import { stopStarted } from './helpers/redis-server.js';

describe('the fault drill', () => {
  afterAll(stopStarted);

  it('ends with the undisturbed ranking, every fault survived and every forgery refused', async () => {
    expect(await faultDrill()).toBe(true);
  }, 300_000);
});
