import { describe, expect, it } from 'vitest';
import { halderWagner } from '../../src/core/size/halder-wagner.js';
import { strainDisagreement } from '../../src/core/size/size-strain-points.js';
import { williamsonHall } from '../../src/core/size/williamson-hall.js';
import { CU_KA1, exactSizeStrainPoints } from './fixtures.js';

const FWHM = { k: 0.9, breadth: 'fwhm' as const, wavelengthAngstrom: CU_KA1 };
const ANGLES = [25, 35, 45, 60, 75, 90];
/** A fixed draw of scatter on the Gaussian parts, about the size of their σ (degrees 2θ). */
const GAUSSIAN_SCATTER = [0.008, -0.011, 0.004, 0.012, -0.006, 0.009];

describe('the quoted size–strain result and its Williamson–Hall cross-check speak with one voice on strain', () => {
  it('says so, naming both methods, exactly when one detects strain and the other does not', () => {
    let disagreements = 0;
    // Strains from clearly absent to clearly present, with 5 % scatter on the Gaussian parts: near the
    // 2σ threshold the two methods (different weights) can fall on opposite sides.
    for (let i = 0; i <= 60; i++) {
      const strain = 2e-5 * i;
      const points = exactSizeStrainPoints(40, strain, ANGLES, [1.02, 0.97, 1.03, 0.98, 1.01, 0.99], { gaussianScatterDeg: GAUSSIAN_SCATTER, gaussianSigmaFloorDeg: 0.01 });
      const wh = williamsonHall(points, FWHM);
      const hw = halderWagner(points, FWHM);
      if ('reason' in wh || 'reason' in hw) throw new Error('no result');
      const note = strainDisagreement(hw, wh);
      if (wh.strainDetected === hw.strainDetected) {
        expect(note).toBeNull();
      } else {
        disagreements++;
        expect(note).toMatch(/^(Halder–Wagner|Williamson–Hall) finds a microstrain of .* none above 2σ: .*strain is not established; quote the Halder–Wagner result/);
      }
    }
    expect(disagreements).toBeGreaterThan(0);
  });
});
