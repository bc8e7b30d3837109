import YAML from 'yaml';
import { type LoadedSweep, parseSweepText } from '../shared/sweep/load.js';

/**
 * The built-in demo sweep. This text is the one source of truth:
 * examples/demo.yaml is a copy for people to read and edit, and a test keeps
 * the two equal.
 *
 * Two sequences of six patterns share some hypercolumns (patternOverlap) over
 * some consecutive positions (overlapLength); a longer presynaptic trace
 * (tauZPre) carries more context past the shared stretch, so the border of
 * recall moves to higher overlap as tauZPre grows. overlapLength 0 is the
 * control row where the sequences share nothing. Input noise makes trials
 * near the border differ, so rates between 0 and 1 appear there.
 *
 * Size: 11 x 5 x 3 = 165 points x 64 replicates = 10,560 jobs of 10 to 20 ms
 * of CPU each (H=10, M=20, L=6, K=2): 66 s for 40 replicates on an idle
 * 2-core machine, so about two minutes for these 64.
 */
export const DEMO_SWEEP_YAML = `# The built-in demo of recallscape (\`recallscape demo\` runs exactly this sweep).
# Where does recall of two stored sequences break down as they share more?
name: demo-overlap
model: bcpnn-sequences
seed: 2026
replicates: 64
fixed:
  hypercolumns: 10
  minicolumns: 20
  sequenceLength: 6
  sequenceCount: 2
  noise: 2            # input noise (sd per unit and step): trials near the border differ
vary:
  patternOverlap: { from: 0, to: 1, steps: 11 }
  overlapLength: { list: [0, 1, 2, 3, 4] }
  tauZPre: { list: [50, 75, 100] }
sampler: { kind: grid }
report: { x: patternOverlap, y: overlapLength, facet: tauZPre, metric: success }
`;

/** Where the copy of the demo sweep lives in the repository. */
export const DEMO_SWEEP_EXAMPLE = 'examples/demo.yaml';

/**
 * The demo sweep, or a smaller copy of it with fewer replicates per point for
 * a quick look (its own folder name, since it is a different sweep).
 */
export function demoSweep(replicates?: number): LoadedSweep {
  if (replicates === undefined) return parseSweepText(DEMO_SWEEP_YAML, 'built-in demo');
  const doc = YAML.parse(DEMO_SWEEP_YAML) as { name: string; replicates: number };
  doc.name = `${doc.name}-${replicates}x`;
  doc.replicates = replicates;
  return parseSweepText(JSON.stringify(doc), `built-in demo, ${replicates} replicates per point`);
}
