import { z } from 'zod';
import type { Model } from '../../model.js';

/**
 * A model that does no work. It exists to measure the cost of the job
 * pipeline itself (queue, threads, result files) in benchmarks and tests.
 */
const params = z
  .object({
    value: z.number().finite().default(0).describe('Echoed back as a metric'),
  })
  .strict();

export const noOpModel: Model<typeof params> = {
  id: 'no-op',
  version: '1',
  summary: 'Does nothing; measures the pipeline overhead per job.',
  params,
  paramInfo: { value: { unit: '1', description: 'Echoed back as a metric' } },
  metricInfo: {
    success: { type: 'boolean', description: 'always true' },
    value: { type: 'number', description: 'the value parameter, echoed' },
    seedParity: { type: 'integer', description: 'the job seed modulo 2' },
  },
  cost: () => 1,
  run: (p, seed) => ({ metrics: { success: true, value: p.value, seedParity: seed % 2 } }),
};
