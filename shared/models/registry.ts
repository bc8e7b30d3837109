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

/**
 * Models that exist for the test suite and the benchmarks (no-op, cpu-burn):
 * they run when named, but lists shown to people leave them out.
 */
const FOR_TESTS: ReadonlySet<string> = new Set([noOpModel.id, cpuBurnModel.id]);

/** Ids of the models a person would choose from (built-in and registered, without the test models). */
export function modelIds(): string[] {
  return MODELS.filter((m) => !FOR_TESTS.has(m.id)).map((m) => m.id);
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
