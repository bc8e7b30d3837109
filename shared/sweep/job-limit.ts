import { InputError } from '../errors.js';

/** Refuse a job count over the limit, with the two ways out. */
export function checkJobLimit(jobs: number, limit: number): void {
  if (jobs > limit) {
    throw new InputError(
      `sweep has ${jobs} jobs, more than the limit ${limit}; pass --yes to run it anyway or raise --max-jobs`,
      [{ path: 'replicates', message: `${jobs} jobs (points x replicates) exceed the limit ${limit}` }],
    );
  }
}
