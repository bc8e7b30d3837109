import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { BANDWIDTH_GRID, selectBandwidth } from '../../coordinator/summarize/bandwidth-selection.js';
import type { LocalResult } from '../../coordinator/summarize/local-likelihood.js';
import { type BinomialPoint, prepareSmoothingData } from '../../coordinator/summarize/local-likelihood-data.js';
import { estimateAt } from '../../coordinator/summarize/local-likelihood-field.js';

// Every expected value below was printed by test/reference/local-likelihood-reference.py
// (statsmodels 0.13.5+dfsg, SciPy 1.10.1, NumPy 1.24.2) from the points in test/reference/local-likelihood-points.json:
// statsmodels GLM(Binomial, logit link) on the points within reach with the
// kernel weights as freq_weights; the sandwich variance J^-1 K J^-1 from
// statsmodels' Hessians of that model with weights w and w^2; the local
// constant interval from statsmodels' proportion_confint(method='wilson') at
// Kish's effective number of trials; the cross-validated likelihood as a sum
// of SciPy binom.logpmf terms. Agreement is required to 1e-6 (observed: 3e-11).

const TOLERANCE = 1e-6;

const fixture = JSON.parse(
  readFileSync(new URL('../reference/local-likelihood-points.json', import.meta.url), 'utf8'),
) as { smooth: BinomialPoint[]; split: BinomialPoint[]; steep: BinomialPoint[] };
const smooth = prepareSmoothingData(fixture.smooth);
const split = prepareSmoothingData(fixture.split);
const steep = prepareSmoothingData(fixture.steep);

interface Expected {
  readonly q: readonly [number, number];
  readonly none?: true;
  readonly method?: 'local-linear' | 'local-constant';
  readonly fallback?: string | null;
  readonly p?: number;
  readonly lo?: number;
  readonly hi?: number;
  readonly logit?: number | null;
  readonly seLogit?: number | null;
  readonly effectivePoints: number;
  readonly effectiveTrials?: number;
}

// "smooth" points (60 locations, one with three replicates), bandwidth 0.25.
const SMOOTH_AT_025: readonly Expected[] = [
  {
    q: [0.5, 0.5],
    method: 'local-linear',
    fallback: null,
    p: 0.4329343547617216,
    lo: 0.33535439782059573,
    hi: 0.5360095897529267,
    logit: -0.26988896258246475,
    seLogit: 0.21131874547112445,
    effectivePoints: 39.312771719466674,
    effectiveTrials: 127.56492547333363,
  },
  {
    q: [0.1, 0.2],
    method: 'local-linear',
    fallback: null,
    p: 0.11268282216103213,
    lo: 0.036298147945802564,
    hi: 0.29980307295782604,
    logit: -2.0636255148310645,
    seLogit: 0.6201081959846612,
    effectivePoints: 21.462980456392785,
    effectiveTrials: 75.26178383042817,
  },
  {
    q: [0.9, 0.8],
    method: 'local-linear',
    fallback: null,
    p: 0.6868688524645526,
    lo: 0.44994888251448556,
    hi: 0.8546962512894546,
    logit: 0.7855212706175799,
    seLogit: 0.5032737903802939,
    effectivePoints: 18.72796347287777,
    effectiveTrials: 54.448079913789364,
  },
  {
    q: [0.3, 0.45],
    method: 'local-linear',
    fallback: null,
    p: 0.43272464718546294,
    lo: 0.3229947383018147,
    hi: 0.5494767042959698,
    logit: -0.27074320993321516,
    seLogit: 0.23944307432583517,
    effectivePoints: 35.29941519193291,
    effectiveTrials: 117.80739415202274,
  },
  {
    q: [0.75, 0.5],
    method: 'local-linear',
    fallback: null,
    p: 0.33235795968872067,
    lo: 0.20966840821466567,
    hi: 0.48296813096179264,
    logit: -0.697539582192068,
    seLogit: 0.32112107280432167,
    effectivePoints: 35.58649605783086,
    effectiveTrials: 112.61524736679354,
  },
  {
    q: [0.02, 0.97],
    method: 'local-linear',
    fallback: null,
    p: 0.9737647769185415,
    lo: 0.7999678241231526,
    hi: 0.9971054892427497,
    logit: 3.6140668720364064,
    seLogit: 1.136742111380578,
    effectivePoints: 13.03880986247576,
    effectiveTrials: 46.660385242306816,
  },
  {
    q: [0.98, 0.03],
    method: 'local-linear',
    fallback: null,
    p: 0.00540741154996942,
    lo: 0.0001556753273773904,
    hi: 0.1595549657469195,
    logit: -5.214562672669291,
    seLogit: 1.8127984096464196,
    effectivePoints: 12.471687485223386,
    effectiveTrials: 41.358348958700056,
  },
  {
    q: [0.6, 0.3],
    method: 'local-linear',
    fallback: null,
    p: 0.1920032625132207,
    lo: 0.11320006229991647,
    hi: 0.30669236921201704,
    logit: -1.437045656609284,
    seLogit: 0.3170553334961657,
    effectivePoints: 36.11690478184706,
    effectiveTrials: 121.62402564857207,
  },
];

// "smooth" points, bandwidth 0.08: mostly fewer than 6 effective points, so local constant.
const SMOOTH_AT_008: readonly Expected[] = [
  {
    q: [0.5, 0.5],
    method: 'local-constant',
    fallback: 'few-effective-points',
    p: 0.47308070018412984,
    lo: 0.2697758818190996,
    hi: 0.6857225951928964,
    logit: -0.10778141810017872,
    seLogit: 0.468090972240744,
    effectivePoints: 5.643252896719586,
    effectiveTrials: 18.30881062021363,
  },
  {
    q: [0.1, 0.2],
    method: 'local-constant',
    fallback: 'few-effective-points',
    p: 0.027843308286692244,
    lo: 0.001935012470187375,
    hi: 0.2973092499785659,
    logit: -3.5529243363914267,
    seLogit: 1.8282724235712302,
    effectivePoints: 3.0317315235723425,
    effectiveTrials: 11.052514075233523,
  },
  {
    q: [0.9, 0.8],
    method: 'local-constant',
    fallback: 'few-effective-points',
    p: 0.6728833048266915,
    lo: 0.4148922140899422,
    hi: 0.8564714741311248,
    logit: 0.7212549458981447,
    seLogit: 0.5694424052952272,
    effectivePoints: 4.728512529018559,
    effectiveTrials: 14.01063847581851,
  },
  {
    q: [0.3, 0.45],
    method: 'local-linear',
    fallback: null,
    p: 0.3775721952874556,
    lo: 0.11033782400359719,
    hi: 0.7479226027796543,
    logit: -0.4998658490491756,
    seLogit: 0.8099277281566861,
    effectivePoints: 6.104501487403972,
    effectiveTrials: 21.537415710902653,
  },
  {
    q: [0.75, 0.5],
    method: 'local-constant',
    fallback: 'few-effective-points',
    p: 0.39944220565182165,
    lo: 0.18084081204529934,
    hi: 0.6670964202262506,
    logit: -0.40778979256218123,
    seLogit: 0.5916543720755449,
    effectivePoints: 4.355417620679656,
    effectiveTrials: 11.90844581133875,
  },
  {
    q: [0.02, 0.97],
    method: 'local-constant',
    fallback: 'few-effective-points',
    p: 0.9597840973463004,
    lo: 0.741329205487522,
    hi: 0.9949935197475472,
    logit: 3.1724458547697276,
    seLogit: 1.2955337890575356,
    effectivePoints: 3.670031323467592,
    effectiveTrials: 15.435870999186312,
  },
  {
    q: [0.98, 0.03],
    method: 'local-constant',
    fallback: 'few-effective-points',
    p: 0.0,
    lo: 0.0,
    hi: 0.2923023035713772,
    logit: null,
    seLogit: null,
    effectivePoints: 2.774472611572727,
    effectiveTrials: 9.300616263076407,
  },
  {
    q: [0.6, 0.3],
    method: 'local-constant',
    fallback: 'few-effective-points',
    p: 0.21607892826338437,
    lo: 0.07352632496909653,
    hi: 0.4891049606426815,
    logit: -1.288664591911651,
    seLogit: 0.6770904876063029,
    effectivePoints: 4.962511745500492,
    effectiveTrials: 12.877211226567859,
  },
];

// "split" points (every trial succeeds left of x = 0.5, fails right of it), bandwidth 0.15.
// Where the reference says 'separation', statsmodels' own fit raised PerfectSeparationError.
const SPLIT_AT_015: readonly Expected[] = [
  {
    q: [0.5, 0.5],
    method: 'local-constant',
    fallback: 'separation',
    p: 0.6247060669508765,
    lo: 0.4590856083177113,
    hi: 0.7655168926519735,
    logit: 0.5095717058283007,
    seLogit: 0.35021210292489774,
    effectivePoints: 11.516173121523906,
    effectiveTrials: 34.77686513389428,
  },
  {
    q: [0.1, 0.2],
    method: 'local-constant',
    fallback: 'separation',
    p: 0.99955801718919,
    lo: 0.8296120740704593,
    hi: 0.9999990480139609,
    logit: 7.723797485698886,
    seLogit: 10.972335468521008,
    effectivePoints: 6.031212897532116,
    effectiveTrials: 18.80132510348914,
  },
  {
    q: [0.9, 0.8],
    method: 'local-constant',
    fallback: 'few-effective-points',
    p: 0.006692224744172453,
    lo: 0.00015542787246501655,
    hi: 0.22600381727331914,
    logit: -5.000094194324809,
    seLogit: 3.281398873304862,
    effectivePoints: 5.255256365056326,
    effectiveTrials: 13.971003399919821,
  },
  {
    q: [0.3, 0.45],
    method: 'local-constant',
    fallback: 'separation',
    p: 0.9516274008700131,
    lo: 0.7924728473289828,
    hi: 0.9902296447106724,
    logit: 2.9792400528088203,
    seLogit: 0.9332717878229213,
    effectivePoints: 8.00080788264283,
    effectiveTrials: 24.941201039599427,
  },
  {
    q: [0.75, 0.5],
    method: 'local-constant',
    fallback: 'separation',
    p: 0.08045142603810454,
    lo: 0.021250109422180613,
    hi: 0.26065933915975503,
    logit: -2.436229270093677,
    seLogit: 0.770038811199876,
    effectivePoints: 7.956415738689678,
    effectiveTrials: 22.79640418339909,
  },
  {
    q: [0.02, 0.97],
    method: 'local-constant',
    fallback: 'few-effective-points',
    p: 0.99976241583118,
    lo: 0.7206567083407823,
    hi: 0.9999998543094079,
    logit: 8.344750989841511,
    seLogit: 20.59349858002024,
    effectivePoints: 3.316237857360245,
    effectiveTrials: 9.92716926558206,
  },
  { q: [0.98, 0.03], none: true, effectivePoints: 1.298736533674987 },
  {
    q: [0.6, 0.3],
    method: 'local-constant',
    fallback: 'few-effective-points',
    p: 0.3514315575293111,
    lo: 0.17338721574535335,
    hi: 0.5832924203794283,
    logit: -0.6127525609797771,
    seLogit: 0.5025996766883941,
    effectivePoints: 5.853036016435562,
    effectiveTrials: 17.368368291846323,
  },
];

// "steep" points (p = expit(30 (y - 0.5)), 3 trials each), bandwidth 0.3. Where the
// reference says 'separation' here, statsmodels' fit converged but its logit at q
// passed +-10, so both fall back to local constant.
const STEEP_AT_03: readonly Expected[] = [
  {
    q: [0.5, 0.5],
    method: 'local-linear',
    fallback: null,
    p: 0.6599997027616613,
    lo: 0.3561768161477533,
    hi: 0.8719802954346053,
    logit: 0.6632928928190177,
    seLogit: 0.6404657176196227,
    effectivePoints: 33.86796971703135,
    effectiveTrials: 101.60390915109403,
  },
  {
    q: [0.5, 0.97],
    method: 'local-constant',
    fallback: 'separation',
    p: 0.9126189328257677,
    lo: 0.8138765229175048,
    hi: 0.9614572171773689,
    logit: 2.346039777831835,
    seLogit: 0.4583765409387481,
    effectivePoints: 19.894231199298996,
    effectiveTrials: 59.682693597896964,
  },
  {
    q: [0.5, 0.03],
    method: 'local-constant',
    fallback: 'separation',
    p: 0.13578123147314416,
    lo: 0.07264026699494973,
    hi: 0.23962441475017715,
    logit: -1.8507809426133361,
    seLogit: 0.3623419096211625,
    effectivePoints: 21.636059675846248,
    effectiveTrials: 64.90817902753872,
  },
  {
    q: [0.3, 0.6],
    method: 'local-linear',
    fallback: null,
    p: 0.8624235863625215,
    lo: 0.4945618195592112,
    hi: 0.9757049517167994,
    logit: 1.835567051170871,
    seLogit: 0.9476299796286732,
    effectivePoints: 29.13436223482366,
    effectiveTrials: 87.40308670447102,
  },
  {
    q: [0.7, 0.42],
    method: 'local-linear',
    fallback: null,
    p: 0.22810644708007555,
    lo: 0.03546979734390035,
    hi: 0.7036815242107431,
    logit: -1.2190342625377364,
    seLogit: 1.0632467457317292,
    effectivePoints: 30.486738796360825,
    effectiveTrials: 91.4602163890825,
  },
];

// Plain (unweighted) logistic regression of the "smooth" points on x and y with statsmodels:
// the linear predictor at q and its usual standard error sqrt(x_q^T cov x_q).
const GLOBAL_FIT = [
  { q: [0.5, 0.5], p: 0.40951211218307443, logit: -0.36598264284967463, seLogit: 0.19015362750139828 },
  { q: [0.1, 0.2], p: 0.2028006176950858, logit: -1.3688814959614286, seLogit: 0.3827248317341858 },
  { q: [0.9, 0.8], p: 0.6540560334438094, logit: 0.6369162102620787, seLogit: 0.3933308885107661 },
  { q: [0.3, 0.45], p: 0.4191332441144757, logit: -0.3263325203094385, seLogit: 0.2219904239094053 },
  { q: [0.75, 0.5], p: 0.32000854916545296, logit: -0.7537325142100406, seLogit: 0.2926249001135807 },
  { q: [0.02, 0.97], p: 0.9489070822516453, logit: 2.921664990913958, seLogit: 0.5345550153273935 },
  { q: [0.98, 0.03], p: 0.02524322251083427, logit: -3.6536302766133075, seLogit: 0.6336089869163127 },
  { q: [0.6, 0.3], p: 0.16752345310124364, logit: -1.6032816895860467, seLogit: 0.2965690901791153 },
] as const;

// Leave-one-out log-likelihood per candidate bandwidth for the "smooth" points
// (null: some left-out point had no usable estimate), and how many left-out
// fits were local linear before the sum ended.
const CURVE: ReadonlyArray<readonly [number, number | null, number]> = [
  [0.0199526231496888, null, 0],
  [0.025118864315095794, null, 0],
  [0.03162277660168379, null, 0],
  [0.039810717055349734, null, 0],
  [0.05011872336272722, null, 0],
  [0.06309573444801933, null, 0],
  [0.07943282347242814, null, 0],
  [0.1, null, 14],
  [0.12589254117941673, -56.004670331285276, 50],
  [0.15848931924611134, -55.365265522205064, 59],
  [0.19952623149688797, -55.54663787048118, 60],
  [0.251188643150958, -56.21675847622197, 60],
  [0.31622776601683794, -56.488917029912514, 60],
  [0.3981071705534972, -56.54974004039743, 60],
  [0.5011872336272722, -56.50406524603448, 60],
  [0.6309573444801932, -56.40781931103578, 60],
  [0.7943282347242815, -56.3075308077538, 60],
  [1.0, -56.22561411759895, 60],
];

function expectNear(actual: number | null | undefined, expected: number | null | undefined, what: string): void {
  if (expected === null || expected === undefined) {
    expect(actual ?? null, what).toBeNull();
    return;
  }
  expect(actual, what).toBeTypeOf('number');
  expect(Math.abs((actual as number) - expected), `${what}: ${actual} vs ${expected}`).toBeLessThanOrEqual(TOLERANCE);
}

function expectLike(actual: LocalResult | undefined, expected: Expected): void {
  const where = `at (${expected.q.join(', ')})`;
  expect(actual, where).toBeDefined();
  if (actual === undefined) return;
  if (expected.none === true) {
    expect(actual.ok, where).toBe(false);
    expectNear(actual.effectivePoints, expected.effectivePoints, `effectivePoints ${where}`);
    return;
  }
  expect(actual.ok, where).toBe(true);
  if (!actual.ok) return;
  expect(actual.method, where).toBe(expected.method);
  expect(actual.fallback, where).toBe(expected.fallback);
  for (const field of ['p', 'lo', 'hi', 'logit', 'seLogit', 'effectivePoints', 'effectiveTrials'] as const) {
    expectNear(actual[field], expected[field], `${field} ${where}`);
  }
}

function check(data: typeof smooth, bandwidth: number, table: readonly Expected[]): void {
  const results = estimateAt(
    data,
    bandwidth,
    table.map((e) => ({ x: e.q[0], y: e.q[1] })),
  );
  table.forEach((expected, i) => {
    expectLike(results[i], expected);
  });
}

describe('local likelihood estimate against statsmodels', () => {
  it('pools the three replicates of one location, as the reference does', () => {
    expect(fixture.smooth.length).toBe(62);
    expect(smooth.count).toBe(60);
    expect(split.count).toBe(30);
  });

  it('matches the kernel-weighted logistic fit, its sandwich standard error and interval to 1e-6', () => {
    check(smooth, 0.25, SMOOTH_AT_025);
  });

  it('falls back to the weighted proportion with a Wilson interval where fewer than 6 effective points are near', () => {
    check(smooth, 0.08, SMOOTH_AT_008);
    expect(SMOOTH_AT_008.filter((e) => e.method === 'local-constant').length).toBe(7);
  });

  it('falls back to local constant where successes and failures are split by a line, and gives no estimate where too few points are near', () => {
    check(split, 0.15, SPLIT_AT_015);
    expect(SPLIT_AT_015.filter((e) => e.fallback === 'separation').length).toBe(4);
  });

  it('falls back to local constant where a converged local fit puts the logit beyond +-10', () => {
    check(steep, 0.3, STEEP_AT_03);
    expect(STEEP_AT_03.filter((e) => e.fallback === 'separation').length).toBe(2);
  });

  it('equals plain logistic regression when the bandwidth is so wide that every weight is 1', () => {
    const results = estimateAt(
      smooth,
      1e6,
      GLOBAL_FIT.map((e) => ({ x: e.q[0], y: e.q[1] })),
    );
    GLOBAL_FIT.forEach((expected, i) => {
      const r = results[i];
      expect(r?.ok && r.method).toBe('local-linear');
      if (!r?.ok) return;
      expectNear(r.p, expected.p, `p at ${expected.q}`);
      expectNear(r.logit, expected.logit, `logit at ${expected.q}`);
      expectNear(r.seLogit, expected.seLogit, `seLogit at ${expected.q}`);
    });
  });
});

describe('bandwidth by leave-one-out likelihood against statsmodels and SciPy', () => {
  it('uses the grid the reference uses: ten per decade from 0.02 to 1', () => {
    expect(BANDWIDTH_GRID.length).toBe(CURVE.length);
    BANDWIDTH_GRID.forEach((h, i) => {
      expect(Math.abs(h - (CURVE[i]?.[0] ?? 0))).toBeLessThan(1e-15);
    });
  });

  it('scores every candidate as the reference does, to 1e-6', () => {
    const { curve } = selectBandwidth(smooth);
    expect(curve.length).toBe(CURVE.length);
    curve.forEach((score, i) => {
      const [h, logLikelihood, localLinear] = CURVE[i] ?? [0, null, 0];
      expectNear(score.bandwidth, h, `bandwidth ${i}`);
      expectNear(score.logLikelihood, logLikelihood, `log-likelihood at h = ${h}`);
      expect(score.localLinear, `local linear fits at h = ${h}`).toBe(localLinear);
      expect(score.leftOut).toBe(60);
      if (logLikelihood === null) expect(score.reason).toMatch(/left-out point/);
    });
  });

  it('chooses the candidate with the largest cross-validated likelihood', () => {
    // Argmax of the reference curve: -55.3653 at h = 10^-0.8.
    const best = CURVE.reduce((a, b) => ((b[1] ?? -Infinity) >= (a[1] ?? -Infinity) ? b : a));
    expect(best[0]).toBeCloseTo(0.15848931924611134, 15);
    expect(selectBandwidth(smooth).bandwidth).toBeCloseTo(best[0], 15);
  });
});
