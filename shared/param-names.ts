import type { z } from 'zod';
import { unknownNameHint } from './closest-names.js';
import { type FieldIssue, shorten } from './errors.js';
import type { AnyModel } from './model.js';

/** Parameter names of a model, in the order its schema declares them. */
export function paramNames(model: AnyModel): string[] {
  return Object.keys((model.params as z.ZodObject).shape);
}

/** Whether `name` is a parameter of the model (an own key of its schema: never `__proto__` or `constructor`). */
export function isParamName(model: AnyModel, name: string): boolean {
  return Object.hasOwn((model.params as z.ZodObject).shape, name);
}

/** The issue for a name the model does not know, with the closest known names. */
export function unknownParamIssue(path: string, name: string, model: AnyModel): FieldIssue {
  const known = paramNames(model);
  const hint = unknownNameHint(name, known, 'known parameters:', 10);
  return {
    path,
    message: `unknown parameter "${shorten(name)}" of model ${model.id}; ${known.length === 0 ? 'this model takes no parameters' : hint}`,
  };
}
