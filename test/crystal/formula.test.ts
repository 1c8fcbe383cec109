import { describe, expect, it } from 'vitest';
import { cifFormula, readableSumFormula } from '../../src/core/crystal/formula.js';

// Expected orders as chemists write these phases (IUPAC Red Book 2005, IR-4.4.2.1: the more
// electropositive element first; Hill order kept for organic formulas — common practice).
describe('formulas in the order chemists write them', () => {
  it('puts Hill-order sums of inorganic phases in electronegativity order', () => {
    expect(readableSumFormula('B6 La')).toBe('LaB6');
    expect(readableSumFormula('I2 Pb')).toBe('PbI2');
    expect(readableSumFormula('Al2 O3')).toBe('Al2O3');
    expect(readableSumFormula('Cl Na')).toBe('NaCl');
    expect(readableSumFormula('Br3 Cs Pb')).toBe('CsPbBr3');
    expect(readableSumFormula('Ce O2')).toBe('CeO2');
    expect(readableSumFormula('H2 O4 S')).toBe('H2SO4');
  });

  it('keeps Hill order for organic formulas and text that is not a plain formula', () => {
    expect(readableSumFormula('C H6 I3 N Pb')).toBe('CH6I3NPb');
    expect(readableSumFormula('Xx2 O')).toBe('Xx2O');
  });

  it('prefers the structural formula the CIF gives', () => {
    expect(cifFormula('(C H3 N H3) Pb I3', 'C H6 I3 N Pb')).toBe('(CH3NH3)PbI3');
    expect(cifFormula(null, 'B6 La')).toBe('LaB6');
    expect(cifFormula(null, null)).toBeNull();
  });
});
