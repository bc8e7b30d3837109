import { readFile, writeFile } from 'node:fs/promises';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { inspectJob } from '../../coordinator/summarize/inspect-job.js';
import { BURN_SWEEP, makeSweepFolder, type SweepFolder } from './sweep-folder.js';

describe('inspectJob', () => {
  let folder: SweepFolder;
  let key = '';
  beforeAll(async () => {
    folder = await makeSweepFolder(BURN_SWEEP, (job) => job.point['successRate'] === 0.5 && job.point['burnMs'] === 0);
    // Tamper with the stored metrics of the first record, as a changed model would.
    const shard = join(folder.dir, 'results', 'test-writer-1.ndjson');
    const lines = (await readFile(shard, 'utf8')).trim().split('\n');
    const first = JSON.parse(lines[0] ?? '{}');
    key = first.key;
    first.metrics.draw = 0.123456;
    lines[0] = JSON.stringify(first);
    await writeFile(shard, `${lines.join('\n')}\n`);
  });
  afterAll(async () => folder.cleanup());

  it('reports when the re-run gives other metrics than the stored record', async () => {
    const result = await inspectJob({ dir: folder.dir, job: key });
    expect(result.stored).toBe('different');
    expect(result.storedMetrics?.['draw']).toBe(0.123456);
    expect(result.metrics['draw']).not.toBe(0.123456);
    expect(result.svgPath).toBeNull();
  });

  it('reports equal metrics for an untouched record', async () => {
    const lines = (await readFile(join(folder.dir, 'results', 'test-writer-1.ndjson'), 'utf8')).trim().split('\n');
    const second = JSON.parse(lines[1] ?? '{}');
    const result = await inspectJob({ dir: folder.dir, job: second.key });
    expect(result.stored).toBe('equal');
    expect(result.metrics).toEqual(second.metrics);
  });
});
