import { unknownNameHint } from '../closest-names.js';
import { InputError, shorten } from '../errors.js';
import type { AnyModel } from '../model.js';
import { bcpnnSequences } from './bcpnn-sequences/index.js';

/**
 * Every model this build can run. Add a model here and nowhere else. Models
 * that exist only for tests and benchmarks (no-op, cpu-burn, ...) are module
 * models in test/fixtures/models, loaded with --models: users and workers
 * never see them.
 */
const BUILT_IN: readonly AnyModel[] = [bcpnnSequences];
/** Built-in models, then those registered at run time (model folders, see shared/models/external/). */
const MODELS: AnyModel[] = [...BUILT_IN];

const byId = new Map(MODELS.map((m) => [m.id, m]));

export const DEFAULT_MODEL_ID = 'bcpnn-sequences';

export function listModels(): readonly AnyModel[] {
  return MODELS;
}

/** Ids of the models a person can choose from: built-in and registered. */
export function modelIds(): string[] {
  return MODELS.map((m) => m.id);
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
    const hint = unknownNameHint(id, modelIds(), 'known models:');
    throw new InputError(`${field}: unknown model "${shorten(id)}"; ${hint}`, [
      { path: field, message: `unknown model "${shorten(id)}"; ${hint}` },
    ]);
  }
  return model;
}
