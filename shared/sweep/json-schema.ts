import { z } from 'zod';
import type { AnyModel } from '../model.js';
import { DEFAULT_MODEL_ID, listModels, modelIds } from '../models/registry.js';
import { paramNames } from '../param-names.js';
import { SweepFileSchema } from './schema.js';

type JsonObject = Record<string, unknown>;

/** One JSON Schema per parameter of the model, with its unit in the description (for an editor's hover). */
function parameterSchemas(model: AnyModel): JsonObject {
  const whole = z.toJSONSchema(model.params, { io: 'input', unrepresentable: 'any' }) as JsonObject;
  const properties = (whole['properties'] ?? {}) as Record<string, JsonObject>;
  const out: JsonObject = {};
  for (const name of paramNames(model)) {
    const info = model.paramInfo[name];
    const own = properties[name] ?? {};
    out[name] =
      info === undefined
        ? own
        : { ...own, description: info.unit === '' ? info.description : `${info.description} (${info.unit})` };
  }
  return out;
}

/**
 * The rules a model adds to a sweep file: under `fixed` only its parameters,
 * each with its own type and range; under `vary` and `derived` only its
 * parameter names. Applies when `model` names it (or, for the default model,
 * when `model` is left out).
 */
function modelRules(model: AnyModel): JsonObject {
  const names = paramNames(model);
  const named = { properties: { model: { const: model.id } }, required: ['model'] };
  return {
    if: model.id === DEFAULT_MODEL_ID ? { anyOf: [named, { not: { required: ['model'] } }] } : named,
    // biome-ignore lint/suspicious/noThenProperty: `then` is a JSON Schema keyword
    then: {
      properties: {
        fixed: { properties: parameterSchemas(model), additionalProperties: false },
        vary: { propertyNames: { enum: names } },
        derived: { propertyNames: { enum: names } },
      },
    },
  };
}

/**
 * JSON Schema (draft 2020-12) of the sweep file as a person writes it
 * (defaults optional). It knows every model's parameters, so an editor
 * completes and checks the names under `fixed`, `vary` and `derived` and the
 * values under `fixed`; recallscape itself checks the rest (cross-field
 * rules, every point against the model) when it loads the file.
 */
export function sweepJsonSchema(): JsonObject {
  const schema = z.toJSONSchema(SweepFileSchema, { io: 'input', unrepresentable: 'any' }) as JsonObject;
  const properties = (schema['properties'] ?? {}) as Record<string, JsonObject>;
  const choices = modelIds();
  const models = listModels();
  return {
    ...schema,
    title: 'recallscape sweep file',
    description: `A parameter sweep for recallscape. Models: ${choices.join(', ')}.`,
    properties: { ...properties, model: { ...properties['model'], examples: choices } },
    allOf: models.map(modelRules),
  };
}
