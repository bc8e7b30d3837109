import { z } from 'zod';
import { listModels } from '../models/registry.js';
import { SweepFileSchema } from './schema.js';

/**
 * JSON Schema (draft 2020-12) of the sweep file as a person writes it
 * (defaults optional). Parameter names and values are checked against the
 * model by recallscape itself, so the schema leaves them open.
 */
export function sweepJsonSchema(): Record<string, unknown> {
  const schema = z.toJSONSchema(SweepFileSchema, { io: 'input', unrepresentable: 'any' }) as Record<string, unknown>;
  const models = listModels().map((m) => m.id);
  return {
    ...schema,
    title: 'recallscape sweep file',
    description: `A parameter sweep for recallscape. Known models: ${models.join(', ')}.`,
  };
}
