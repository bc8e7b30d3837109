import { parseSweepText, type LoadedSweep } from '../shared/sweep/load.js';

/**
 * The built-in demo sweep. This text is the one source of truth:
 * examples/demo.yaml is a copy for people to read and edit, and a test keeps
 * the two equal.
 *
 * Two sequences of six patterns share some hypercolumns (patternOverlap) over
 * some consecutive positions (overlapLength); a longer presynaptic trace
 * (tauZPre) carries more context past the shared stretch. overlapLength 0 is
 * the control row where the sequences share nothing.
 *
 * Size: 11 x 5 x 2 = 110 points x 128 replicates = 14,080 jobs of about
 * 10 ms of CPU each (H=10, M=20, L=6, K=2): about two minutes on 2 cores
 * (127 s wall, 142 s CPU, measured on a shared 2-core machine); longer on a
 * busy one.
 */
export const DEMO_SWEEP_YAML = `# The built-in demo of recallscape (\`recallscape demo\` runs exactly this sweep).
# Where does recall of two stored sequences break down as they share more?
name: demo-overlap
model: bcpnn-sequences
seed: 2026
replicates: 128
fixed:
  hypercolumns: 10
  minicolumns: 20
  sequenceLength: 6
  sequenceCount: 2
vary:
  patternOverlap: { from: 0, to: 1, steps: 11 }
  overlapLength: { list: [0, 1, 2, 3, 4] }
  tauZPre: { list: [50, 100] }
sampler: { kind: grid }
report: { x: patternOverlap, y: overlapLength, facet: tauZPre, metric: success }
`;

/** Where the copy of the demo sweep lives in the repository. */
export const DEMO_SWEEP_EXAMPLE = 'examples/demo.yaml';

export function demoSweep(): LoadedSweep {
  return parseSweepText(DEMO_SWEEP_YAML, 'built-in demo');
}
