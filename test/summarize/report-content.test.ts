import { readdir, readFile, writeFile } from 'node:fs/promises';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { buildReport } from '../../coordinator/summarize/build-report.js';
import { bcpnnSequences } from '../../shared/models/bcpnn-sequences/index.js';
import { BURN_SWEEP, makeSweepFolder, type SweepFolder } from './sweep-folder.js';

const FIXED = { hypercolumns: 6, minicolumns: 12, sequenceLength: 4, epochs: 2, recallDuration: 400 };
const SWEEP = `
name: content-check
model: bcpnn-sequences
seed: 3
replicates: 2
fixed: ${JSON.stringify(FIXED)}
vary:
  patternOverlap: { list: [0, 0.5, 1] }
  overlapLength: { list: [1, 2] }
`;

/** RFC 4180 fields of one line without quotes inside (what these files hold): a plain split. */
function splitCsv(text: string): string[][] {
  return text
    .trimEnd()
    .split('\n')
    .map((l) => l.split(','));
}

async function shardRecords(dir: string): Promise<Array<Record<string, unknown> & { key: string }>> {
  const out = [];
  for (const name of await readdir(join(dir, 'results'))) {
    for (const line of (await readFile(join(dir, 'results', name), 'utf8')).split('\n')) {
      if (line.trim() !== '') out.push(JSON.parse(line));
    }
  }
  return out;
}

describe('what a report says about its sweep', () => {
  let folder: SweepFolder;
  let html = '';
  let md = '';
  beforeAll(async () => {
    folder = await makeSweepFolder(SWEEP, (job) => !(job.point['patternOverlap'] === 1 && job.replicate === 1));
    await buildReport({ dir: folder.dir });
    html = await readFile(join(folder.dir, 'report', 'index.html'), 'utf8');
    md = await readFile(join(folder.dir, 'report', 'sweep.md'), 'utf8');
  });
  afterAll(async () => folder.cleanup());

  it('lists every parameter that is not varied with its resolved value, marking those the sweep changed', () => {
    // The model's own schema gives the resolved values and the defaults (not the report code).
    const resolved = bcpnnSequences.params.parse(FIXED) as Record<string, unknown>;
    const defaults = bcpnnSequences.params.parse({}) as Record<string, unknown>;
    const fixedNames = Object.keys(bcpnnSequences.paramInfo).filter(
      (n) => n !== 'patternOverlap' && n !== 'overlapLength',
    );
    const section = /<h3 id="fixed">[\s\S]*?<\/table>/.exec(html)?.[0] ?? '';
    for (const name of fixedNames) {
      const value = resolved[name];
      const shown = value === undefined ? '(unset)' : String(value);
      const row = new RegExp(`<tr( class="changed")?><th>${name}</th><td>([^<]*)</td>`).exec(section);
      expect(row, name).not.toBeNull();
      expect(row?.[2], name).toBe(shown);
      const changed = JSON.stringify(value) !== JSON.stringify(defaults[name]);
      expect(row?.[1] !== undefined, `${name} marked as changed`).toBe(changed);
    }
    // The five fixed values differ from the defaults (model-spec.md: H 10, M 20, L 6, 3 epochs, 1000 ms).
    expect((section.match(/class="changed"/g) ?? []).length).toBe(5);
    expect(md).toContain('| **hypercolumns** | **6** | hypercolumns |');
    expect(md).toContain('| tauZPre | 50 | ms |');
  });

  it('states the model, sampler, replicates, root seed, hash, varied ranges and the model’s metric definitions', () => {
    for (const text of [
      `bcpnn-sequences ${bcpnnSequences.version}`,
      'grid (every combination of the ranges)',
      folder.sweep.hash,
      'list: 0, 0.5, 1',
      'fraction of hypercolumns',
      'every stored sequence replayed in order',
    ])
      expect(html, text).toContain(text);
    expect(html).toMatch(/<th>root seed<\/th><td>3<\/td>/);
    expect(html).toMatch(/<th>replicates per point<\/th><td>2<\/td>/);
    expect(md).toContain('| root seed | 3 |');
    expect(md).toMatch(/\| success \| {2}\| every stored sequence replayed in order/);
  });

  it('writes one row per trial to trials.csv with the key, point, replicate, seed, parameters and every scalar metric', async () => {
    const text = await readFile(join(folder.dir, 'report', 'trials.csv'), 'utf8');
    expect(text.endsWith('\n')).toBe(true);
    expect(text).not.toContain('\r');
    const [header = [], ...rows] = splitCsv(text);
    expect(header.slice(0, 7)).toEqual([
      'job',
      'point',
      'replicate',
      'seed',
      'patternOverlap',
      'overlapLength',
      'success',
    ]);
    expect(new Set(header).size).toBe(header.length);
    const records = await shardRecords(folder.dir);
    // 3 x 2 points x 2 replicates, less the second replicate of the two points at overlap 1 (worked by hand).
    expect(rows.length).toBe(10);
    expect(records.length).toBe(10);
    for (const row of rows) {
      expect(row.length).toBe(header.length);
      const record = records.find((r) => r.key === row[0]) as {
        replicate: number;
        seed: number;
        point: Record<string, number>;
        metrics: Record<string, unknown>;
      };
      expect(record).toBeDefined();
      expect(Number(row[2])).toBe(record.replicate);
      expect(Number(row[3])).toBe(record.seed);
      expect(Number(row[4])).toBe(record.point['patternOverlap']);
      for (let c = 6; c < header.length; c++) {
        const value = record.metrics[header[c] ?? ''];
        // Empty is missing (null); booleans as true/false, which pandas and R read as logical values.
        expect(row[c], header[c]).toBe(value === null ? '' : String(value));
      }
    }
    // The point column is the row of points.csv holding the trial's parameters.
    const points = splitCsv(await readFile(join(folder.dir, 'report', 'points.csv'), 'utf8')).slice(1);
    for (const row of rows) {
      const p = points[Number(row[1])];
      expect([p?.[0], p?.[1]]).toEqual([row[4], row[5]]);
    }
  });

  it('names real job keys for inspect in the points table and the cell tooltips', async () => {
    const records = await shardRecords(folder.dir);
    const keys = new Set(records.map((r) => r.key));
    const [header = [], ...rows] = splitCsv(await readFile(join(folder.dir, 'report', 'points.csv'), 'utf8'));
    const success = header.indexOf('success_job');
    const failure = header.indexOf('failure_job');
    for (const row of rows) {
      const named = [row[success], row[failure]].filter((k) => k !== '');
      expect(named.length).toBeGreaterThan(0);
      for (const k of named) expect(keys.has(k ?? '')).toBe(true);
    }
    const jobs = [...html.matchAll(/data-(?:success|failure)-job="([0-9a-f]{32})"/g)].map((m) => m[1]);
    expect(jobs.length).toBeGreaterThan(0);
    for (const k of jobs) expect(keys.has(k ?? '')).toBe(true);
    expect(html).toContain(`recallscape inspect ${folder.dir} --job `);
  });
});

describe('trials.csv of records with a metric the model does not declare', () => {
  let folder: SweepFolder;
  beforeAll(async () => {
    folder = await makeSweepFolder(BURN_SWEEP, (job) => job.replicate === 0);
    // Give one stored record an extra scalar metric, as a changed model would.
    const shard = join(folder.dir, 'results', 'test-writer-1.ndjson');
    const lines = (await readFile(shard, 'utf8')).trim().split('\n');
    const first = JSON.parse(lines[0] ?? '{}');
    first.metrics.extra = 7.5;
    lines[0] = JSON.stringify(first);
    await writeFile(shard, `${lines.join('\n')}\n`);
  });
  afterAll(async () => folder.cleanup());

  it('still lists every trial, with a column for the extra metric, and leaves no temporary file', async () => {
    await buildReport({ dir: folder.dir, formats: ['csv'] });
    const [header = [], ...rows] = splitCsv(await readFile(join(folder.dir, 'report', 'trials.csv'), 'utf8'));
    expect(header).toContain('extra');
    // 22 points of BURN_SWEEP, one replicate each (worked by hand).
    expect(rows.length).toBe(22);
    const extra = header.indexOf('extra');
    expect(rows.filter((r) => r[extra] === '7.5').length).toBe(1);
    expect(rows.filter((r) => r[extra] === '').length).toBe(21);
    const leftovers = (await readdir(folder.dir)).filter((n) => n.endsWith('.tmp'));
    expect(leftovers).toEqual([]);
  });

  it('leaves no temporary file behind when the report is refused', async () => {
    await expect(buildReport({ dir: folder.dir, metric: 'nothing' })).rejects.toThrow(/--metric/);
    const leftovers = (await readdir(folder.dir)).filter((n) => n.endsWith('.tmp'));
    expect(leftovers).toEqual([]);
  });
});

describe('a report of a sweep with computed parameters', () => {
  let folder: SweepFolder;
  beforeAll(async () => {
    folder = await makeSweepFolder(`
name: computed-columns
model: bcpnn-sequences
seed: 5
replicates: 1
fixed: { minicolumns: 12, sequenceLength: 4, epochs: 2 }
vary:
  hypercolumns: { list: [4, 8] }
  patternOverlap: { list: [0, 1] }
derived:
  weightGain: "8 / hypercolumns"
  recallDuration: "sequenceLength * 75"
`);
    await buildReport({ dir: folder.dir, formats: ['csv', 'md', 'html'] });
  });
  afterAll(async () => folder.cleanup());

  it('gives every computed parameter a column after the varied ones, in points.csv and trials.csv', async () => {
    const [header = [], ...rows] = splitCsv(await readFile(join(folder.dir, 'report', 'points.csv'), 'utf8'));
    expect(header.slice(0, 4)).toEqual(['hypercolumns', 'patternOverlap', 'weightGain', 'recallDuration']);
    for (const row of rows) {
      // 8 / hypercolumns and 4 * 75 (the formulas above, worked by hand).
      expect(Number(row[2])).toBe(8 / Number(row[0]));
      expect(Number(row[3])).toBe(300);
    }
    const [trialHeader = [], ...trials] = splitCsv(await readFile(join(folder.dir, 'report', 'trials.csv'), 'utf8'));
    expect(trialHeader.slice(4, 8)).toEqual(['hypercolumns', 'patternOverlap', 'weightGain', 'recallDuration']);
    expect(trials.length).toBe(4);
    for (const t of trials) expect(Number(t[6])).toBe(8 / Number(t[4]));
  });

  it('lists the formulas with the varied parameters, not their defaults with the fixed ones', async () => {
    const md = await readFile(join(folder.dir, 'report', 'sweep.md'), 'utf8');
    expect(md).toContain('| weightGain | computed: 8 / hypercolumns |');
    const fixed = md.slice(md.indexOf('## Fixed parameters'), md.indexOf('## Metrics'));
    expect(fixed).not.toContain('| weightGain |');
    expect(fixed).toContain('| tauZPre | 50 | ms |');
  });
});
