// Placeholder: the model is being built in this folder (see model.ts when it lands).
import { z } from 'zod';
import type { Model } from '../../model.js';

const params = z.object({}).strict();
export const bcpnnSequences: Model<typeof params> = {
  id: 'bcpnn-sequences',
  version: '0',
  summary: 'placeholder',
  params,
  paramInfo: {},
  cost: () => 1,
  run: () => {
    throw new Error('bcpnn-sequences is not built yet');
  },
};
