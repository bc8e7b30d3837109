import { z } from 'zod';
import type { TracePanel } from '../../model.js';

/**
 * The line protocol between recallscape and a model program: one JSON object
 * per line each way, UTF-8, "\n" at the end of each. Requests carry only
 * the job's key, seed and full parameters (and `trace: true` when someone
 * inspects one job); nothing in a request names a command, a path or code.
 */
export interface ProtocolRequest {
  readonly key: string;
  readonly seed: number;
  readonly params: Readonly<Record<string, unknown>>;
  readonly trace?: true;
}

/** One recorded time course in a reply: rows of equal length, one value per series. */
export const ProtocolTraceSchema = z
  .object({
    title: z.string().max(200),
    stepMs: z.number().positive(),
    seriesLabels: z.array(z.string().max(100)).min(1).max(10_000),
    markEndMs: z.number().min(0).default(0),
    rows: z.array(z.array(z.number())),
  })
  .strict()
  .superRefine((panel, ctx) => {
    const width = panel.seriesLabels.length;
    const bad = panel.rows.findIndex((row) => row.length !== width);
    if (bad >= 0) {
      ctx.addIssue({
        code: 'custom',
        path: ['rows', bad],
        message: `has ${panel.rows[bad]?.length} values, expected one per series (${width})`,
      });
    }
  });

export const ProtocolReplySchema = z.union([
  z.object({ key: z.string(), metrics: z.unknown(), trace: z.array(ProtocolTraceSchema).optional() }).strict(),
  z.object({ key: z.string(), error: z.string() }).strict(),
]);
export type ProtocolReply = z.infer<typeof ProtocolReplySchema>;

export function encodeRequest(request: ProtocolRequest): string {
  return `${JSON.stringify(request)}\n`;
}

export function tracePanels(panels: ReadonlyArray<z.infer<typeof ProtocolTraceSchema>>): TracePanel[] {
  return panels.map((panel) => {
    const width = panel.seriesLabels.length;
    const values = new Float64Array(panel.rows.length * width);
    panel.rows.forEach((row, t) => {
      values.set(row, t * width);
    });
    return {
      title: panel.title,
      stepMs: panel.stepMs,
      steps: panel.rows.length,
      seriesLabels: panel.seriesLabels,
      markEndMs: panel.markEndMs,
      values,
    };
  });
}
