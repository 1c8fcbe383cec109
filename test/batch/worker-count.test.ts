/**
 * A small batch runs on one worker (issue 15): each worker pays its own module load and cold first
 * analysis, so `analyze` with a few files starts one, and the JIT warms once; more workers only for
 * batches large enough to repay them, never more than the cores.
 */
import { availableParallelism } from 'node:os';
import { describe, expect, it } from 'vitest';
import { workersFor } from '../../src/node/batch.js';

describe('workers for a batch when none are asked for', () => {
  it('is one for one to sixteen files', () => {
    for (let files = 1; files <= 16; files++) expect(workersFor(files)).toBe(1);
  });

  it('grows with the batch beyond that, up to the number of cores', () => {
    const cores = Math.max(1, availableParallelism());
    expect(workersFor(17)).toBe(Math.min(2, cores));
    expect(workersFor(10_000)).toBe(cores);
  });
});
