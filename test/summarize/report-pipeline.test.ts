import { readFile } from 'node:fs/promises';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { buildReportFrom } from '../../coordinator/summarize/build-report.js';
import { REPORT_CHARTS } from '../../coordinator/summarize/charts/registry.js';
import type { ReportChart } from '../../coordinator/summarize/charts/report-chart.js';
import { ResultStore } from '../../shared/store/result-store.js';
import { BURN_SWEEP, makeSweepFolder, type SweepFolder } from './sweep-folder.js';

/** A chart written for this test only: one text file and a page section, from the collected groups. */
const groupCount: ReportChart = {
  id: 'group-count',
  pageRank: 15,
  render(report, want) {
    const trials = report.groups.reduce((s, g) => s + g.summary.n, 0);
    return {
      files: want('csv') ? [['group-count.txt', `${report.groups.length} groups, ${trials} trials\n`]] : [],
      section: `<h2 id="group-count">${report.groups.length} groups</h2>`,
    };
  },
};

describe('the report pipeline', () => {
  let folder: SweepFolder;
  beforeAll(async () => {
    folder = await makeSweepFolder(BURN_SWEEP, (job) => job.replicate < 3);
  });
  afterAll(async () => folder.cleanup());

  it('writes the files and places the section of a chart added to the list, between the ranks around it', async () => {
    const result = await buildReportFrom(ResultStore.open(folder.dir), { dir: folder.dir }, [
      ...REPORT_CHARTS,
      groupCount,
    ]);
    // 22 grid points (11 x 2), 3 of 4 replicates each: 66 trials (BURN_SWEEP, worked by hand).
    expect(await readFile(join(folder.dir, 'report', 'group-count.txt'), 'utf8')).toBe('22 groups, 66 trials\n');
    expect(result.files.map((f) => f.split('/').pop())).toContain('group-count.txt');
    const html = await readFile(join(folder.dir, 'report', 'index.html'), 'utf8');
    const diagrams = html.indexOf('<h2 id="diagrams">Phase diagrams</h2>');
    const mine = html.indexOf('<h2 id="group-count">22 groups</h2>');
    const table = html.indexOf('<h2 id="points">Per-point table</h2>');
    expect(diagrams).toBeGreaterThan(0);
    expect(mine).toBeGreaterThan(diagrams);
    expect(table).toBeGreaterThan(mine);
  });
});
