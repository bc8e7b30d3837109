import type { Metrics } from '../../model.js';
import type { MetricSpec, MetricType } from './description-schema.js';

export interface MetricDeclaration {
  readonly metrics: Readonly<Record<string, MetricSpec>>;
  readonly successMetric: string;
}

const TYPE_WORDS: Record<MetricType, string> = {
  boolean: 'true or false',
  number: 'a finite number',
  integer: 'a whole number',
  numbers: 'a list of numbers',
};

function fits(type: MetricType, value: unknown): boolean {
  switch (type) {
    case 'boolean':
      return typeof value === 'boolean';
    case 'number':
      return typeof value === 'number' && Number.isFinite(value);
    case 'integer':
      return typeof value === 'number' && Number.isSafeInteger(value);
    case 'numbers':
      return Array.isArray(value) && value.every((v) => v === null || (typeof v === 'number' && Number.isFinite(v)));
  }
}

function shown(value: unknown): string {
  const text = JSON.stringify(value) ?? String(value);
  return text.length > 60 ? `${text.slice(0, 57)}...` : text;
}

export type MetricCheck =
  | { readonly ok: true; readonly metrics: Metrics }
  | { readonly ok: false; readonly problem: string };

/**
 * Check what a model reported against its declared metrics: every declared
 * metric present with its type, nothing undeclared (a misspelt name would
 * otherwise vanish from every report). The result carries `success`, a copy
 * of the declared success metric, which diagrams use by default.
 */
export function checkMetrics(declared: MetricDeclaration, reported: unknown): MetricCheck {
  if (reported === null || typeof reported !== 'object' || Array.isArray(reported)) {
    return { ok: false, problem: `metrics must be a JSON object of name: value, got ${shown(reported)}` };
  }
  const values = reported as Record<string, unknown>;
  const problems: string[] = [];
  for (const [name, spec] of Object.entries(declared.metrics)) {
    if (!Object.hasOwn(values, name)) {
      problems.push(`metric "${name}" is missing`);
      continue;
    }
    const value = values[name];
    if (value === null && spec.nullable) continue;
    if (!fits(spec.type, value)) {
      problems.push(
        `metric "${name}" must be ${TYPE_WORDS[spec.type]}${spec.nullable ? ' or null' : ''}, got ${shown(value)}`,
      );
    }
  }
  for (const name of Object.keys(values)) {
    if (!Object.hasOwn(declared.metrics, name)) {
      problems.push(
        `metric "${name}" is not declared in the description (declared: ${Object.keys(declared.metrics).join(', ')})`,
      );
    }
  }
  if (problems.length > 0) return { ok: false, problem: problems.slice(0, 8).join('; ') };
  const metrics = { ...values, success: values[declared.successMetric] } as Metrics;
  return { ok: true, metrics };
}
