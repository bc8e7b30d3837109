import { z } from 'zod';
import type { Model } from '../../model.js';
import { createRandom } from '../../random.js';

/**
 * Keeps one core busy for a set wall-clock time, then returns metrics that
 * depend only on (params, seed). Used to test lock renewal and crash recovery
 * with jobs that outlast the queue's lock duration.
 */
const params = z
  .object({
    burnMs: z.number().int().min(0).max(3_600_000).default(100).describe('Busy time per job'),
    successRate: z.number().min(0).max(1).default(1).describe('Probability that a trial counts as a success'),
  })
  .strict();

export const cpuBurnModel: Model<typeof params> = {
  id: 'cpu-burn',
  version: '1',
  summary: 'Busy-waits for burnMs; for testing long jobs and crash recovery.',
  params,
  paramInfo: {
    burnMs: { unit: 'ms', description: 'Busy time per job' },
    successRate: { unit: '1', description: 'Probability that a trial counts as a success' },
  },
  metricInfo: {
    success: { type: 'boolean', description: 'a uniform draw fell below successRate' },
    draw: { type: 'number', description: 'the uniform draw in [0, 1) that decided success' },
    busy: { type: 'boolean', description: 'the busy loop ran at least once (always true when burnMs > 0)' },
  },
  cost: (p) => p.burnMs * 1e6,
  run: (p, seed) => {
    const until = performance.now() + p.burnMs;
    let spins = 0;
    while (performance.now() < until) spins++;
    const draw = createRandom(seed).uniform();
    return { metrics: { success: draw < p.successRate, draw, busy: spins > 0 || p.burnMs === 0 } };
  },
};
