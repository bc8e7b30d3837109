import type { ParamInfo } from '../../shared/model.js';

/** `name (unit)` for axis titles and table headers; dimensionless stays explicit. */
export function paramLabel(name: string, info: Readonly<Record<string, ParamInfo>>): string {
  const unit = info[name]?.unit.trim() ?? '';
  if (unit === '') return name;
  if (unit === '1') return `${name} (dimensionless)`;
  return `${name} (${unit})`;
}

/** The unit to write after a value, e.g. "50 ms"; empty for plain numbers ("2", not "2 count"). */
export function valueUnit(name: string, info: Readonly<Record<string, ParamInfo>>): string {
  const unit = info[name]?.unit.trim() ?? '';
  return unit === '1' || unit === 'count' ? '' : unit;
}
