import { describe, expect, it } from 'vitest';
import { checkDefaultsRead, derivedSetup, derivePoint } from '../../shared/formula/derive-point.js';
import { compileDerived, evaluateDerived } from '../../shared/formula/derived-params.js';
import { bcpnnSequences } from '../../shared/models/bcpnn-sequences/index.js';

const KNOWN = Object.keys(bcpnnSequences.params.shape);
const DEFAULTS = bcpnnSequences.params.parse({}) as Record<string, unknown>;

function compiled(raw: Record<string, string>, fixed: string[] = [], varied: string[] = []) {
  const result = compileDerived(raw, { known: KNOWN, fixed, varied });
  if (!result.success) throw new Error(JSON.stringify(result.issues));
  return result.derived;
}

function issues(raw: Record<string, string>, fixed: string[] = [], varied: string[] = []) {
  const result = compileDerived(raw, { known: KNOWN, fixed, varied });
  if (result.success) throw new Error('expected issues');
  return result.issues;
}

describe('compiling the derived section', () => {
  it('orders formulas by what they read and keeps the normalised texts in file order', () => {
    const d = compiled({
      recallDuration: 'sequenceLength*200',
      sequenceLength: 'round(minicolumns/10)',
      weightGain: '10/hypercolumns',
    });
    expect(d.formulas.map((f) => f.name)).toEqual(['sequenceLength', 'recallDuration', 'weightGain']);
    expect(d.normalised).toEqual({
      recallDuration: 'sequenceLength * 200',
      sequenceLength: 'round(minicolumns / 10)',
      weightGain: '10 / hypercolumns',
    });
    expect(Object.keys(d.normalised)).toEqual(['recallDuration', 'sequenceLength', 'weightGain']);
  });

  it('refuses a cycle, naming it', () => {
    expect(issues({ weightGain: 'adaptGain / 2', adaptGain: 'weightGain * 2' })).toEqual([
      {
        path: 'derived.weightGain',
        message: 'computed parameters form a cycle: weightGain -> adaptGain -> weightGain',
      },
    ]);
    expect(issues({ gain: 'gain + 1' })).toEqual([
      { path: 'derived.gain', message: 'computed parameters form a cycle: gain -> gain' },
    ]);
  });

  it('refuses an unknown name in a formula with the closest known names', () => {
    expect(issues({ weightGain: '10 / hypercolums' })).toEqual([
      { path: 'derived.weightGain', message: 'unknown name "hypercolums" in the formula; did you mean hypercolumns?' },
    ]);
  });

  it('refuses constructor, __proto__ and other names that are not parameters', () => {
    for (const name of ['constructor', '__proto__', 'toString', 'process', 'globalThis']) {
      const found = issues({ weightGain: `${name} + 1` });
      expect(found).toHaveLength(1);
      expect(found[0]!.path).toBe('derived.weightGain');
      expect(found[0]!.message).toMatch(new RegExp(`^unknown name "${name}" in the formula`));
    }
  });

  it('refuses an unknown computed parameter with the closest names', () => {
    expect(issues({ weightgain: '1' })).toEqual([
      { path: 'derived.weightgain', message: 'unknown parameter "weightgain"; did you mean weightGain or gain?' },
    ]);
    // JSON.parse makes __proto__ an own key, as a sweep file in JSON would.
    expect(issues(JSON.parse('{"__proto__": "1"}') as Record<string, string>)).toEqual([
      { path: 'derived.__proto__', message: 'unknown parameter "__proto__"' },
    ]);
  });

  it('refuses a computed parameter that is also fixed or varied', () => {
    expect(issues({ weightGain: '1' }, ['weightGain'])).toEqual([
      {
        path: 'derived.weightGain',
        message: '"weightGain" is computed and also fixed; keep it in one of derived, fixed',
      },
    ]);
    expect(issues({ weightGain: '1' }, [], ['weightGain'])[0]!.message).toMatch(/computed and also varied/);
  });

  it('reports a bad formula at its own field, and every bad formula at once', () => {
    expect(issues({ weightGain: 'a.b', adaptGain: '1 +' })).toEqual([
      { path: 'derived.weightGain', message: 'a.b is not allowed: formulas have no property access' },
      { path: 'derived.adaptGain', message: 'syntax error at position 4: Expected expression after +' },
    ]);
  });
});

describe('evaluating the derived section at a point', () => {
  it('evaluates in dependency order, each formula reading the ones before it', () => {
    const d = compiled({ recallDuration: 'sequenceLength * 200', sequenceLength: 'sequenceCount + 2' });
    expect(evaluateDerived(d, { sequenceCount: 4 })).toEqual({
      success: true,
      values: { sequenceLength: 6, recallDuration: 1200 },
    });
  });

  it('reads defaults, then fixed, then the point (the point wins)', () => {
    const setup = derivedSetup(compiled({ weightGain: '10 / hypercolumns' }), DEFAULTS, ['hypercolumns'], []);
    // Default H = 10 (docs/model.md): gain 1.
    expect(derivePoint(setup, {}, {})).toMatchObject({ success: true, computed: { weightGain: 1 } });
    expect(derivePoint(setup, { hypercolumns: 20 }, {})).toMatchObject({ computed: { weightGain: 0.5 } });
    expect(derivePoint(setup, { hypercolumns: 20 }, { hypercolumns: 25 })).toEqual({
      success: true,
      input: { hypercolumns: 25, weightGain: 0.4 },
      computed: { weightGain: 0.4 },
    });
  });

  it('reports the formula that failed and why', () => {
    const d = compiled({ weightGain: '10 / (hypercolumns - 25)' });
    expect(evaluateDerived(d, { hypercolumns: 25 })).toEqual({
      success: false,
      name: 'weightGain',
      message: '10 / (hypercolumns - 25) gives Infinity; every value in a formula must be a finite number',
    });
  });

  it('refuses to read a parameter whose default depends on others, or one that is not a number', () => {
    const d = compiled({ recallDuration: 'overlapStart * 100' });
    const result = evaluateDerived(d, DEFAULTS);
    expect(result).toMatchObject({ success: false, name: 'recallDuration' });
    expect(!result.success && result.message).toMatch(/"overlapStart" has no value here/);
    const seq = compiled({ recallDuration: 'sequences * 100' });
    expect(evaluateDerived(seq, { sequences: [[[0], [1]]] })).toMatchObject({
      success: false,
      message: '"sequences" is not a number here ([[[0],[1]]])',
    });
  });

  it('catches a default the model resolves differently from the one a formula read', () => {
    const setup = derivedSetup(compiled({ recallDuration: 'hypercolumns * 100' }), DEFAULTS, ['sequences'], []);
    const sequences = [
      [
        [0, 1, 2],
        [1, 2, 3],
      ],
      [
        [2, 3, 4],
        [3, 4, 5],
      ],
    ];
    const derived = derivePoint(setup, { sequences }, {});
    if (!derived.success) throw new Error(derived.message);
    const resolved = bcpnnSequences.params.parse(derived.input) as Record<string, unknown>;
    // H comes from the sequences (3), not the default 10 (docs/model.md, "Parameters").
    expect(resolved['hypercolumns']).toBe(3);
    expect(checkDefaultsRead(setup, resolved)).toEqual({
      name: 'recallDuration',
      message:
        "the formula read hypercolumns = 10 (the model's default), but the model resolves hypercolumns to 3 here; set hypercolumns in fixed or vary",
    });
    const plain = derivePoint(setup, {}, {});
    if (!plain.success) throw new Error(plain.message);
    expect(
      checkDefaultsRead(setup, bcpnnSequences.params.parse(plain.input) as Record<string, unknown>),
    ).toBeUndefined();
  });
});
