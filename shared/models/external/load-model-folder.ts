import { existsSync, readFileSync, statSync } from 'node:fs';
import { join, resolve } from 'node:path';
import { type FieldIssue, InputError, issuesFromZod } from '../../errors.js';
import { DESCRIPTION_FILE, type ModelDescription, ModelDescriptionSchema } from './description-schema.js';
import { declarationOf, type ExternalModel, type ExternalSource, externalModel } from './external-model.js';
import { importModelModule, ModuleContractProblem, moduleRunner } from './module-runner.js';
import { compileParameters, ParameterSchemaProblem } from './param-schema.js';
import { programRunner } from './program-runner.js';

const MAX_DESCRIPTION_BYTES = 1024 * 1024;

function problem(file: string, issues: readonly FieldIssue[]): InputError {
  const first = issues[0];
  const head = first === undefined ? 'invalid model description' : `${first.path}: ${first.message}`;
  const more = issues.length > 1 ? ` (and ${issues.length - 1} more)` : '';
  return new InputError(`${file}: ${head}${more}`, issues);
}

function readDescription(file: string): unknown {
  let text: string;
  try {
    if (statSync(file).size > MAX_DESCRIPTION_BYTES) {
      throw problem(file, [{ path: '(file)', message: `larger than ${MAX_DESCRIPTION_BYTES} bytes` }]);
    }
    text = readFileSync(file, 'utf8');
  } catch (error) {
    if (error instanceof InputError) throw error;
    const code = (error as NodeJS.ErrnoException).code;
    const why = code === 'ENOENT' ? `no ${DESCRIPTION_FILE} here` : (error as Error).message;
    throw problem(file, [{ path: '(file)', message: why }]);
  }
  try {
    return JSON.parse(text);
  } catch (error) {
    throw problem(file, [{ path: '(file)', message: `not valid JSON: ${(error as Error).message}` }]);
  }
}

/** Rules across fields that the schema cannot say on its own. */
function crossFieldIssues(description: ModelDescription): FieldIssue[] {
  const issues: FieldIssue[] = [];
  const success = description.metrics[description.successMetric];
  if (success === undefined) {
    issues.push({
      path: 'successMetric',
      message: `"${description.successMetric}" is not one of the metrics (${Object.keys(description.metrics).join(', ')})`,
    });
  } else if (success.type !== 'boolean' || success.nullable) {
    issues.push({
      path: `metrics.${description.successMetric}`,
      message: 'the success metric must be of type boolean and not nullable',
    });
  }
  if (description.successMetric !== 'success' && Object.hasOwn(description.metrics, 'success')) {
    issues.push({
      path: 'metrics.success',
      message: `"success" is kept for the copy of the success metric (${description.successMetric}); rename this metric or make it the successMetric`,
    });
  }
  return issues;
}

/** Resolve the program against the folder when it is a path ("./run.sh", "bin/sim"); a bare name is looked up on PATH. */
function programCommand(folder: string, command: readonly string[], file: string): string[] {
  const [program, ...args] = command;
  if (program === undefined) throw problem(file, [{ path: 'command', message: 'at least the program to start' }]);
  if (!program.includes('/')) return [program, ...args];
  const path = resolve(folder, program);
  if (!existsSync(path)) {
    throw problem(file, [{ path: 'command.0', message: `${program}: no such file in ${folder}` }]);
  }
  return [path, ...args];
}

export interface LoadOptions {
  /** The supervisor script to start programs through (tests); defaults to the built one next to the client. */
  readonly supervisor?: URL;
}

/**
 * Read, check and turn one model folder into a Model. The description is
 * validated field by field; module models are imported now, so a broken
 * module is reported here and not at the first job. Throws InputError naming
 * the file and the field.
 */
export async function loadModelFolder(folder: string, options: LoadOptions = {}): Promise<ExternalModel> {
  const root = resolve(folder);
  const file = join(root, DESCRIPTION_FILE);
  const parsed = ModelDescriptionSchema.safeParse(readDescription(file));
  if (!parsed.success) throw problem(file, issuesFromZod(parsed.error.issues));
  const description = parsed.data;
  const cross = crossFieldIssues(description);
  if (cross.length > 0) throw problem(file, cross);
  let compiled: ReturnType<typeof compileParameters>;
  try {
    compiled = compileParameters(description.parameters);
  } catch (error) {
    if (error instanceof ParameterSchemaProblem) throw problem(file, error.issues);
    throw error;
  }
  const source: ExternalSource = {
    kind: description.kind,
    folder: root,
    descriptionFile: file,
    timeoutMs: description.timeoutMs,
    startupMs: description.kind === 'program' ? description.startupMs : 0,
    metrics: description.metrics,
    successMetric: description.successMetric,
  };
  const declared = declarationOf(description);
  if (description.kind === 'program') {
    const command = programCommand(root, description.command, file);
    const runner = programRunner(
      { id: description.id, folder: root, command, declared, startupMs: description.startupMs },
      options.supervisor,
    );
    return externalModel(description, compiled, source, runner);
  }
  const modulePath = resolve(root, description.module);
  if (!existsSync(modulePath)) {
    throw problem(file, [{ path: 'module', message: `${description.module}: no such file in ${root}` }]);
  }
  try {
    const module = await importModelModule(modulePath, description);
    return externalModel(description, compiled, source, moduleRunner(description.id, declared, module));
  } catch (error) {
    if (error instanceof ModuleContractProblem) {
      throw problem(file, [{ path: 'module', message: `${description.module} ${error.message}` }]);
    }
    throw error;
  }
}
