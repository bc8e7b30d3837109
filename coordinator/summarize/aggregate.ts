import type { ResultRecord } from '../../shared/schemas/records.js';
import { GroupSummary, type MetricKind } from './group-summary.js';

/** Where a record goes: a group key, or null to leave it out (counted). */
export type GroupKeyOf = (record: ResultRecord) => string | null;

export interface Aggregation {
  /** Group key -> summary, in first-seen order. */
  readonly groups: Map<string, GroupSummary>;
  /** Every scalar metric seen (except `success`), with how it is summarised. */
  readonly metricKinds: Map<string, MetricKind>;
  /** Records summarised. */
  readonly records: number;
  /** Records that fell into no group (e.g. a value outside the binned range). */
  readonly skipped: number;
}

/**
 * Stream records into per-group summaries. Memory grows with the number of
 * groups, never with the number of records, so a million records of a grid
 * sweep cost a few hundred group summaries.
 */
export async function aggregateRecords(
  records: AsyncIterable<ResultRecord> | Iterable<ResultRecord>,
  keyOf: GroupKeyOf,
): Promise<Aggregation> {
  const groups = new Map<string, GroupSummary>();
  const metricKinds = new Map<string, MetricKind>();
  let count = 0;
  let skipped = 0;
  for await (const record of records) {
    const key = keyOf(record);
    if (key === null) {
      skipped += 1;
      continue;
    }
    let group = groups.get(key);
    if (group === undefined) {
      group = new GroupSummary();
      groups.set(key, group);
    }
    group.add(record.metrics, metricKinds, record.key);
    count += 1;
  }
  return { groups, metricKinds, records: count, skipped };
}
