/**
 * A forgetting model as a recallscape module model (plain JavaScript, no
 * dependencies). A memory's strength decays as exp(-delay / tau); at recall
 * the strength plus Gaussian noise must exceed a threshold. recallscape
 * imports this file and calls run(params, seed) in its worker threads.
 */

export const id = 'forgetting-js';
export const version = '1.0.0';

/** 32-bit generator (mulberry32), seeded from both halves of the job's seed. */
function generator(seed) {
  let state = (seed >>> 0) ^ Math.floor(seed / 2 ** 32);
  return () => {
    state = (state + 0x6d2b79f5) | 0;
    let t = Math.imul(state ^ (state >>> 15), 1 | state);
    t = (t + Math.imul(t ^ (t >>> 7), 61 | t)) ^ t;
    return ((t ^ (t >>> 14)) >>> 0) / 2 ** 32;
  };
}

/** A standard normal deviate (Box-Muller). */
function normal(next) {
  const u = 1 - next();
  const v = next();
  return Math.sqrt(-2 * Math.log(u)) * Math.cos(2 * Math.PI * v);
}

export function run(params, seed, options = {}) {
  const { delayMs, tauMs, noise, threshold } = params;
  const strength = Math.exp(-delayMs / tauMs);
  const observed = strength + noise * normal(generator(seed));
  const metrics = {
    recalled: observed > threshold,
    strength,
    margin: observed - threshold,
  };
  if (options.trace !== true) return { metrics };
  // The decaying strength from learning to recall, 50 rows.
  const steps = 50;
  const values = new Float64Array(steps * 2);
  for (let t = 0; t < steps; t++) {
    values[t * 2] = Math.exp(-(t * delayMs) / (steps - 1) / tauMs);
    values[t * 2 + 1] = threshold;
  }
  const trace = [
    {
      title: 'memory strength from learning to recall',
      stepMs: delayMs / (steps - 1) || 1,
      steps,
      seriesLabels: ['strength', 'threshold'],
      markEndMs: 0,
      values,
    },
  ];
  return { metrics, trace };
}

/** Every trial costs the same. */
export function cost() {
  return 1;
}
