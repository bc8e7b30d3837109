import { existsSync, readdirSync, statSync } from 'node:fs';
import { delimiter, join, resolve } from 'node:path';
import { InputError } from '../../errors.js';
import { findModel, registerModel } from '../registry.js';
import { DESCRIPTION_FILE } from './description-schema.js';
import { type ExternalModel, isExternalModel } from './external-model.js';
import { type LoadOptions, loadModelFolder } from './load-model-folder.js';
import { addModelFolders, type ExternalModelSettings, setModelTimeout } from './settings.js';

/** Environment variable naming the models folder(s) when `--models` is not given. */
export const MODELS_ENV = 'RECALLSCAPE_MODELS';

/**
 * Folders to load models from: `--models` when given, else the environment
 * variable; either may list several folders separated by the system's path
 * delimiter (":" here).
 */
export function modelFolderList(option: string | undefined, env: NodeJS.ProcessEnv = process.env): string[] {
  const raw = option ?? env[MODELS_ENV] ?? '';
  return raw
    .split(delimiter)
    .map((part) => part.trim())
    .filter((part) => part !== '')
    .map((part) => resolve(part));
}

function folderError(field: string, message: string): InputError {
  return new InputError(`${field}: ${message}`, [{ path: field, message }]);
}

/**
 * The model folders under `dir`: every sub-folder holding a
 * recallscape-model.json, or `dir` itself when it holds one.
 */
export function modelFoldersIn(dir: string, field = '--models'): string[] {
  let isFolder = false;
  try {
    isFolder = statSync(dir).isDirectory();
  } catch {
    throw folderError(field, `${dir}: no such folder`);
  }
  if (!isFolder) throw folderError(field, `${dir} is not a folder (give the folder that holds model folders)`);
  if (existsSync(join(dir, DESCRIPTION_FILE))) return [dir];
  const folders = readdirSync(dir, { withFileTypes: true })
    .filter((entry) => entry.isDirectory() && existsSync(join(dir, entry.name, DESCRIPTION_FILE)))
    .map((entry) => join(dir, entry.name))
    .sort();
  if (folders.length === 0) {
    throw folderError(field, `${dir} holds no model folder (a folder with a ${DESCRIPTION_FILE})`);
  }
  return folders;
}

/**
 * Load every model of these folders and add them to this thread's registry.
 * Loading the same folders again (another command in one process) is a
 * no-op; two descriptions with one id, or an id of a built-in model, are an
 * InputError naming both places.
 */
export async function registerModelFolders(
  dirs: readonly string[],
  options: LoadOptions & { readonly field?: string } = {},
): Promise<ExternalModel[]> {
  const field = options.field ?? '--models';
  const loaded: ExternalModel[] = [];
  for (const dir of dirs) {
    for (const folder of modelFoldersIn(dir, field)) {
      const model = await loadModelFolder(folder, options);
      const existing = findModel(model.id);
      if (existing !== undefined) {
        if (isExternalModel(existing) && existing.source.descriptionFile === model.source.descriptionFile) {
          loaded.push(existing);
          continue;
        }
        const where = isExternalModel(existing) ? existing.source.descriptionFile : 'the built-in models';
        throw new InputError(
          `${model.source.descriptionFile}: id: model "${model.id}" is already defined by ${where}; give each model its own id`,
          [{ path: 'id', message: `model "${model.id}" is already defined by ${where}` }],
        );
      }
      registerModel(model);
      loaded.push(model);
    }
  }
  addModelFolders(dirs);
  return loaded;
}

/** In a pool thread: register what the main thread registered, with its time limit. */
export async function applyExternalModelSettings(settings: ExternalModelSettings): Promise<void> {
  await registerModelFolders(settings.folders);
  setModelTimeout(settings.timeoutMs);
}

/** `--models` (or the environment variable) loaded into the registry; nothing when neither is set. */
export async function registerModelsFromOption(option: string | undefined): Promise<ExternalModel[]> {
  const dirs = modelFolderList(option);
  if (dirs.length === 0) return [];
  return registerModelFolders(dirs, { field: option === undefined ? MODELS_ENV : '--models' });
}
