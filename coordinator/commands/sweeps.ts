import type { Command } from 'commander';
import { action } from '../cli-support.js';
import { defineCommand } from '../command-specs.js';
import { completedPercent } from '../completed-percent.js';
import { listSweeps, type SweepEntry } from '../list-sweeps.js';
import { displayPath, shellWord } from '../shell-text.js';

interface SweepsOptions {
  readonly json?: boolean;
}

export function registerSweeps(program: Command): void {
  defineCommand(program, 'sweeps')
    .option('--json', 'print the list as one JSON object')
    .action(
      action(async (root: string, options: SweepsOptions) => {
        const sweeps = await listSweeps(root);
        process.stdout.write(
          options.json === true ? `${JSON.stringify({ root, sweeps })}\n` : describeSweeps(root, sweeps, Date.now()),
        );
      }),
    );
}

/** "2026-12-02 14:05" in local time: precise enough to tell sweeps apart, short enough for a column. */
function localMinute(iso: string): string {
  const d = new Date(iso);
  const two = (n: number) => String(n).padStart(2, '0');
  return `${d.getFullYear()}-${two(d.getMonth() + 1)}-${two(d.getDate())} ${two(d.getHours())}:${two(d.getMinutes())}`;
}

function age(iso: string, now: number): string {
  const minutes = Math.max(0, Math.floor((now - Date.parse(iso)) / 60_000));
  if (minutes < 1) return 'just now';
  if (minutes < 120) return `${minutes} min ago`;
  const hours = Math.floor(minutes / 60);
  return hours < 48 ? `${hours} h ago` : `${Math.floor(hours / 24)} days ago`;
}

const REPORT_WORDS = { none: 'none', current: 'up to date', stale: 'older than the results' } as const;

export function describeSweeps(root: string, sweeps: readonly SweepEntry[], now: number): string {
  if (sweeps.length === 0) return `no sweeps in ${displayPath(root)} (a sweep folder holds sweep.json)\n`;
  const rows = sweeps.map((s) => [
    s.name,
    s.planned === null ? `${s.done} of ?` : `${s.done} of ${s.planned} (${completedPercent(s.done, s.planned)})`,
    String(s.failingJobs),
    `${localMinute(s.lastActivity)} (${age(s.lastActivity, now)})`,
    REPORT_WORDS[s.report.state],
  ]);
  const header = ['sweep', 'jobs done', 'failing', 'last activity', 'report'];
  const widths = header.map((h, i) => Math.max(h.length, ...rows.map((r) => (r[i] ?? '').length)));
  const line = (cells: readonly string[]) =>
    cells
      .map((c, i) => (i === cells.length - 1 ? c : c.padEnd(widths[i] ?? 0)))
      .join('  ')
      .trimEnd();
  const out = [line(header), ...rows.map(line)];
  for (const s of sweeps) {
    if (s.problem !== null) out.push(`${s.name}: planned jobs unknown: ${s.problem}`);
    if (s.warnings > 0) out.push(`${s.name}: ${s.warnings} warnings while reading its files (see progress or report)`);
  }
  const folder = (s: SweepEntry) => shellWord(displayPath(s.dir));
  const first = sweeps[0];
  if (first !== undefined) {
    out.push('', `details: recallscape progress ${folder(first)}    report: recallscape report ${folder(first)}`);
  }
  return `${out.join('\n')}\n`;
}
