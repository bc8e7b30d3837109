import { appendFile, mkdtemp, open, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { ResultStore, type StoreWarning } from '../../shared/store/result-store.js';
import { MAX_LINE_BYTES, type RawLine, readLines } from '../../shared/store/shard-reader.js';
import { parseSweepText } from '../../shared/sweep/load.js';
import { useTestModels } from '../fixtures/test-models.js';
import { resultFor } from './record-fixture.js';

// no-op and cpu-burn are test models (test/fixtures/models), not built in.
await useTestModels();

async function lines(file: string, max?: number): Promise<RawLine[]> {
  const out: RawLine[] = [];
  for await (const raw of readLines(file, max)) out.push(raw);
  return out;
}

describe('shard reader', () => {
  let dir = '';
  beforeEach(async () => {
    dir = await mkdtemp(join(tmpdir(), 'rs-shard-reader-'));
  });
  afterEach(async () => {
    await rm(dir, { recursive: true, force: true });
  });

  it('passes over a line longer than the limit, naming its line and byte offset, and reads on', async () => {
    const file = join(dir, 'a.ndjson');
    // Offsets counted by hand: "ab\n" is bytes 0-2, the 12-byte line starts at 3, "cd\n" at 16, "xyz" at 19.
    await writeFile(file, 'ab\n123456789012\ncd\nxyz');
    const got = await lines(file, 10);
    expect(got).toEqual([
      { text: 'ab', line: 1, offset: 0, bytes: 2, terminated: true },
      { text: null, line: 2, offset: 3, bytes: 12, terminated: true },
      { text: 'cd', line: 3, offset: 16, bytes: 2, terminated: true },
      { text: 'xyz', line: 4, offset: 19, bytes: 3, terminated: false },
    ]);
  });

  it('keeps a line of exactly the limit and reports an over-long unterminated last line as cut short', async () => {
    const file = join(dir, 'b.ndjson');
    await writeFile(file, '1234567890\n12345678901');
    const got = await lines(file, 10);
    expect(got.map((l) => [l.text, l.terminated])).toEqual([
      ['1234567890', true],
      [null, false],
    ]);
  });

  it('reads the records around a 600 MB line instead of failing, and warns with the file and offset', async () => {
    const sweep = parseSweepText(
      'name: long-line\nmodel: no-op\nseed: 2\nvary:\n  value: { list: [1, 2, 3] }\n',
      'long.yaml',
    );
    const store = ResultStore.at(dir, sweep.spec.name);
    await store.prepare(sweep);
    const shard = join(store.resultsDir, 'w.ndjson');
    const first = `${JSON.stringify(resultFor(sweep, 0))}\n`;
    await writeFile(shard, first);
    // 600 MB of zero bytes without a newline, as a sparse file (no real disk use): more than the
    // longest string V8 can build (about 512 MiB), which is what broke readers before.
    const long = 600 * 1024 * 1024;
    const handle = await open(shard, 'r+');
    await handle.truncate(first.length + long);
    await handle.close();
    await appendFile(shard, `\n${JSON.stringify(resultFor(sweep, 2))}\n`);

    const warnings: StoreWarning[] = [];
    const keys = await store.completedKeys({ onWarning: (w) => warnings.push(w) });
    expect(keys.size).toBe(2);
    expect(warnings).toHaveLength(1);
    expect(warnings[0]?.kind).toBe('bad-line');
    expect(warnings[0]?.line).toBe(2);
    expect(warnings[0]?.message).toBe(
      `${shard}:2 (byte offset ${first.length}): a line of ${long} bytes, longer than the ${MAX_LINE_BYTES} a record may have; skipped unread`,
    );
  });
});
