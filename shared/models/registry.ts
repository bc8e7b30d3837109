import { InputError } from '../errors.js';
import type { AnyModel } from '../model.js';
import { bcpnnSequences } from './bcpnn-sequences/index.js';
import { cpuBurnModel } from './utility/cpu-burn.js';
import { noOpModel } from './utility/no-op.js';

/** Every model this build can run. Add a model here and nowhere else. */
const MODELS: readonly AnyModel[] = [bcpnnSequences, noOpModel, cpuBurnModel];

const byId = new Map(MODELS.map((m) => [m.id, m]));

export const DEFAULT_MODEL_ID = 'bcpnn-sequences';

export function listModels(): readonly AnyModel[] {
  return MODELS;
}

export function findModel(id: string): AnyModel | undefined {
  return byId.get(id);
}

/** The model with this id, or an InputError naming `field` and the known ids. */
export function requireModel(id: string, field = 'model'): AnyModel {
  const model = byId.get(id);
  if (model === undefined) {
    const known = MODELS.map((m) => m.id).join(', ');
    throw new InputError(`${field}: unknown model "${id}"; known models: ${known}`, [
      { path: field, message: `unknown model "${id}"; known models: ${known}` },
    ]);
  }
  return model;
}
