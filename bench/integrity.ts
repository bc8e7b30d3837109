/**
 * Costs of the integrity checks of issue 9:
 * - the readers' record identity check (key and seed recomputed per record), in CPU time:
 *   time per record alone, in two orders (replicates of a point together, as
 *   workers write them; every record a new point, the worst case for the point
 *   cache), and a whole scan of 1,000,000 records with and without it;
 * - `cancel` of 100,000 waiting jobs: the page-wise Lua script against the old
 *   way (list the ids, then remove each through BullMQ), on the Redis at
 *   RECALLSCAPE_REDIS_URL or 127.0.0.1:6379, with a unique queue deleted afterwards.
 */
import { randomBytes } from 'node:crypto';
import { closeSync, openSync, writeSync } from 'node:fs';
import { mkdtemp, rm } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { Queue } from 'bullmq';
import { Redis } from 'ioredis';
import { openWorkQueue } from '../shared/queue/backends.js';
import { jobIdPrefix } from '../shared/queue/bullmq/job-ids.js';
import { REDIS_URL_ENV } from '../shared/redis-url.js';
import { type ResultRecord, ResultRecordSchema } from '../shared/schemas/records.js';
import { recordIdentityCheck } from '../shared/store/record-identity.js';
import { ResultStore } from '../shared/store/result-store.js';
import { scanShards } from '../shared/store/shard-reader.js';
import { expandJobs, toPayload } from '../shared/sweep/expand.js';
import { type LoadedSweep, parseSweepText } from '../shared/sweep/load.js';

function recordsOf(sweep: LoadedSweep, limit: number): ResultRecord[] {
  const out: ResultRecord[] = [];
  for (const job of expandJobs(sweep)) {
    if (out.length === limit) break;
    out.push({
      v: 1,
      key: job.key,
      sweepHash: sweep.hash,
      model: sweep.model.id,
      modelVersion: sweep.model.version,
      replicate: job.replicate,
      seed: job.seed,
      point: job.point,
      metrics: { success: true, value: 1, seedParity: job.seed % 2 },
      writer: 'bench',
      run: 'r',
      finishedAt: '2026-01-01T00:00:00.000Z',
      elapsedMs: 1,
    });
  }
  return out;
}

function perRecord(sweep: LoadedSweep, records: readonly ResultRecord[]): number {
  const check = recordIdentityCheck(sweep);
  // CPU time, not wall time: the shared machine's load would swamp the figure.
  const start = process.cpuUsage();
  let bad = 0;
  for (const r of records) if (check(r) !== undefined) bad++;
  const used = process.cpuUsage(start);
  if (bad > 0) throw new Error(`${bad} records failed the check`);
  return (used.user + used.system) / records.length;
}

async function checkCosts(): Promise<void> {
  const noOp = parseSweepText(
    `name: bench-id\nmodel: no-op\nreplicates: 10\nvary:\n  value: { from: 0, to: 1, steps: 20000 }\n`,
    'bench',
  );
  const grouped = recordsOf(noOp, 200_000);
  console.log(
    `identity check, no-op, 10 replicates per point together: ${perRecord(noOp, grouped).toFixed(2)} us CPU/record`,
  );
  const spread = parseSweepText(
    `name: bench-id2\nmodel: no-op\nreplicates: 1\nvary:\n  value: { from: 0, to: 1, steps: 100000 }\n`,
    'bench',
  );
  const each = recordsOf(spread, 100_000);
  console.log(
    `identity check, no-op, every record a new point:           ${perRecord(spread, each).toFixed(2)} us CPU/record`,
  );
  const bcpnn = parseSweepText(
    `name: bench-id3\nmodel: bcpnn-sequences\nreplicates: 1\nvary:\n  patternOverlap: { from: 0, to: 1, steps: 20000 }\n`,
    'bench',
  );
  const bcpnnRecords = recordsOf(bcpnn, 20_000);
  console.log(
    `identity check, bcpnn-sequences (all parameters), every record a new point: ${perRecord(bcpnn, bcpnnRecords).toFixed(2)} us CPU/record`,
  );
  const bcpnnGrouped = parseSweepText(
    `name: bench-id4\nmodel: bcpnn-sequences\nreplicates: 10\nvary:\n  patternOverlap: { from: 0, to: 1, steps: 2000 }\n`,
    'bench',
  );
  console.log(
    `identity check, bcpnn-sequences, 10 replicates per point together: ${perRecord(bcpnnGrouped, recordsOf(bcpnnGrouped, 20_000)).toFixed(2)} us CPU/record`,
  );

  // A whole scan of 1,000,000 records (many-records style: one shard, replicates together).
  const root = await mkdtemp(join(tmpdir(), 'rs-bench-integrity-'));
  try {
    const sweep = parseSweepText(
      `name: bench-scan\nmodel: no-op\nreplicates: 100\nvary:\n  value: { from: 0, to: 1, steps: 10000 }\n`,
      'bench',
    );
    const store = ResultStore.at(root, 'bench-scan');
    await store.prepare(sweep);
    const fd = openSync(join(store.resultsDir, 'w.ndjson'), 'w');
    let chunk: string[] = [];
    for (const r of recordsOf(sweep, 1_000_000)) {
      chunk.push(JSON.stringify(r));
      if (chunk.length === 10_000) {
        writeSync(fd, `${chunk.join('\n')}\n`);
        chunk = [];
      }
    }
    if (chunk.length > 0) writeSync(fd, `${chunk.join('\n')}\n`);
    closeSync(fd);
    const scan = async (withCheck: boolean): Promise<number> => {
      const start = process.cpuUsage();
      let n = 0;
      const check = withCheck ? recordIdentityCheck(sweep) : undefined;
      for await (const _ of scanShards(store.resultsDir, ResultRecordSchema, sweep.hash, {}, check)) n++;
      if (n !== 1_000_000) throw new Error(`scanned ${n}`);
      const used = process.cpuUsage(start);
      return (used.user + used.system) / 1e6;
    };
    const without = await scan(false);
    const withCheck = await scan(true);
    const keysStart = process.cpuUsage();
    const keys = await store.completedKeys();
    const keysUsed = process.cpuUsage(keysStart);
    const keysSeconds = (keysUsed.user + keysUsed.system) / 1e6;
    console.log(
      `scan of 1,000,000 records, CPU time: ${without.toFixed(1)} s without the check, ${withCheck.toFixed(1)} s with it ` +
        `(+${(((withCheck - without) / without) * 100).toFixed(0)}%); completedKeys (checked, deduplicated): ${keysSeconds.toFixed(1)} s for ${keys.size} keys`,
    );
  } finally {
    await rm(root, { recursive: true, force: true });
  }
}

async function cancelCosts(): Promise<void> {
  const url = process.env[REDIS_URL_ENV] ?? 'redis://127.0.0.1:6379';
  const tag = randomBytes(4).toString('hex');
  const settings = {
    url,
    masked: url,
    queue: { name: `bench-cancel-${tag}`, prefix: `rsb${tag}` },
    connectTimeoutMs: 5_000,
  };
  const sweep = parseSweepText(
    'name: bench-cancel\nmodel: no-op\nreplicates: 1000\nvary:\n  value: { from: 0, to: 1, steps: 100 }\n',
    'bench',
  );
  const entries = [...expandJobs(sweep)].map((job) => ({ key: job.key, payload: toPayload(sweep, job) }));
  const work = await openWorkQueue(settings);
  const client = new Redis(url);
  try {
    const fill = async (): Promise<void> => {
      for (let i = 0; i < entries.length; i += 5_000)
        await work.add({ hash: sweep.hash, name: sweep.spec.name }, entries.slice(i, i + 5_000), {
          retryFailed: false,
        });
    };
    await fill();
    let start = performance.now();
    const removed = await work.cancel(sweep.hash);
    const scripted = (performance.now() - start) / 1000;
    console.log(`cancel of ${removed} waiting jobs, one Lua script per page of 1,000: ${scripted.toFixed(2)} s`);

    // The old way, for comparison: list the waiting ids, then remove each through BullMQ.
    await fill();
    const queue = new Queue(settings.queue.name, { connection: client.duplicate(), prefix: settings.queue.prefix });
    start = performance.now();
    const prefix = jobIdPrefix(sweep.hash);
    const ids: string[] = [];
    for (let from = 0; ; from += 1_000) {
      const page = await queue.getRanges(['wait'], from, from + 999);
      ids.push(...page.filter((id) => id.startsWith(prefix)));
      if (page.length < 1_000) break;
    }
    let old = 0;
    for (let i = 0; i < ids.length; i += 500)
      old += (await Promise.all(ids.slice(i, i + 500).map((id) => queue.remove(id)))).filter((r) => r === 1).length;
    const snapshot = (performance.now() - start) / 1000;
    console.log(`the old way (snapshot, then remove each): ${old} jobs in ${snapshot.toFixed(2)} s`);
    await queue.close();
  } finally {
    await work.close();
    let cursor = '0';
    do {
      const [next, keys] = await client.scan(cursor, 'MATCH', `${settings.queue.prefix}:*`, 'COUNT', 1000);
      cursor = next;
      if (keys.length > 0) await client.del(...keys);
    } while (cursor !== '0');
    client.disconnect();
  }
}

export async function run(): Promise<void> {
  await checkCosts();
  await cancelCosts();
}
