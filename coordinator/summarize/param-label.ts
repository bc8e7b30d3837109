import type { ParamInfo } from '../../shared/model.js';

/** Units that say nothing to a reader: pure numbers and bare counts. */
const SILENT_UNITS = new Set(['', '1', 'count']);

/** The unit as shown to people: '' for pure numbers and bare counts. */
export function unitOf(name: string, info: Readonly<Record<string, ParamInfo>>): string {
  const unit = info[name]?.unit.trim() ?? '';
  return SILENT_UNITS.has(unit) ? '' : unit;
}

/** `name (unit)` for axis titles and table headers: "tauZPre (ms)", "overlapLength (positions)", "adaptGain". */
export function paramLabel(name: string, info: Readonly<Record<string, ParamInfo>>): string {
  const unit = unitOf(name, info);
  return unit === '' ? name : `${name} (${unit})`;
}

/** A value with its unit for running text: "50 ms", "2 positions", "0.5 (fraction of hypercolumns)", "3". */
export function withUnit(text: string, name: string, info: Readonly<Record<string, ParamInfo>>): string {
  const unit = unitOf(name, info);
  if (unit === '') return text;
  return unit.includes(' ') ? `${text} (${unit})` : `${text} ${unit}`;
}
