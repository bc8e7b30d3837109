import { InputError } from '../errors.js';
import type { AnyModel } from '../model.js';
import { bcpnnSequences } from './bcpnn-sequences/index.js';
import { cpuBurnModel } from './utility/cpu-burn.js';
import { noOpModel } from './utility/no-op.js';

/** Every model this build can run. Add a model here and nowhere else. */
const BUILT_IN: readonly AnyModel[] = [bcpnnSequences, noOpModel, cpuBurnModel];
/** Built-in models, then those registered at run time (model folders, see shared/models/external/). */
const MODELS: AnyModel[] = [...BUILT_IN];

const byId = new Map(MODELS.map((m) => [m.id, m]));

export const DEFAULT_MODEL_ID = 'bcpnn-sequences';

export function listModels(): readonly AnyModel[] {
  return MODELS;
}

/** Add a model found at run time (this thread only: every thread registers its own). */
export function registerModel(model: AnyModel): void {
  if (byId.has(model.id)) throw new Error(`model "${model.id}" is already registered`);
  MODELS.push(model);
  byId.set(model.id, model);
}

/** Release what registered models hold (their child processes). */
export async function closeModels(): Promise<void> {
  await Promise.all(MODELS.map((m) => m.close?.()));
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
