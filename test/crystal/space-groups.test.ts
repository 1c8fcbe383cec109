import { describe, expect, it } from 'vitest';
import { operationsFromHall } from '../../src/core/crystal/hall.js';
import { allSpaceGroupSettings, getSpaceGroup, identifySpaceGroup, sameOperations } from '../../src/core/crystal/space-groups.js';
import { parseXyzOperation } from '../../src/core/crystal/symop.js';
import { InputError } from '../../src/core/errors.js';

describe('space-group lookup', () => {
  it('accepts Hermann–Mauguin symbols with any spacing, case and underscores', () => {
    for (const query of ['Fd-3m', 'F d -3 m', 'fd-3m', 'F d -3 m :2', 'Fd3m', '227', 227, '227:2']) {
      expect(getSpaceGroup(query).symbol, String(query)).toBe('F d -3 m:2');
    }
    expect(getSpaceGroup('Fd-3m:1').symbol).toBe('F d -3 m:1');
    for (const query of ['P 63/m m c', 'P63/mmc', 'P 6_3/m m c', '194']) expect(getSpaceGroup(query).number).toBe(194);
    expect(getSpaceGroup('Pm3m').number).toBe(221);
  });

  it('tells hexagonal and rhombohedral axes apart for R groups, hexagonal by default', () => {
    expect(getSpaceGroup('R-3c:H').symbol).toBe('R -3 c:H');
    expect(getSpaceGroup('R-3c').symbol).toBe('R -3 c:H');
    expect(getSpaceGroup('R -3 c:R').symbol).toBe('R -3 c:R');
    expect(getSpaceGroup('R-3c:R').operations).toHaveLength(12);
    expect(getSpaceGroup('R-3c:H').operations).toHaveLength(36);
  });

  it('reads short monoclinic symbols as unique axis b, and full symbols for other settings', () => {
    expect(getSpaceGroup('P21/c').symbol).toBe('P 1 21/c 1');
    expect(getSpaceGroup('P 1 21/n 1').hall).toBe('-P 2yn');
    expect(getSpaceGroup('C2/c').symbol).toBe('C 1 2/c 1');
    expect(getSpaceGroup('P 1 1 21/b').number).toBe(14);
    expect(getSpaceGroup('14:c1').symbol).toBe('P 1 1 21/a');
    expect(getSpaceGroup('Pbnm').number).toBe(62);
  });

  it('accepts Hall symbols, tabulated or not', () => {
    expect(getSpaceGroup('-P 2ybc').symbol).toBe('P 1 21/c 1');
    expect(getSpaceGroup('Hall: -F 4vw 2vw 3').symbol).toBe('F d -3 m:2');
    // A Hall symbol with an origin shift that no table row uses still gives its operators.
    const shifted = getSpaceGroup('-P 2ybc (1 0 0)');
    expect(shifted.number).toBeNull();
    expect(shifted.operations).toHaveLength(4);
  });

  it('keeps every setting reachable by its own symbol and Hall symbol (no two settings share a key)', () => {
    for (const setting of allSpaceGroupSettings()) {
      expect(getSpaceGroup(setting.symbol).hall, setting.symbol).toBe(setting.hall);
      expect(getSpaceGroup(`Hall: ${setting.hall}`).hall, setting.hall).toBe(setting.hall);
    }
  });

  it('rejects unknown symbols with an InputError', () => {
    expect(() => getSpaceGroup('P 7')).toThrow(InputError);
    expect(() => getSpaceGroup('231')).toThrow(/not known/);
    expect(() => getSpaceGroup('', { file: 'x.cif', line: 3 })).toThrow(/x\.cif, line 3/);
  });
});

describe('space group from operators', () => {
  it('identifies P 21/c from its four coordinate triplets, in any order', () => {
    const ops = ['-x,-y,-z', 'x,y,z', 'x,-y+1/2,z+1/2', '-x,y+1/2,-z+1/2'].map((t) => parseXyzOperation(t));
    const group = identifySpaceGroup(ops, 'from file');
    expect(group.symbol).toBe('P 1 21/c 1');
    expect(sameOperations(group, getSpaceGroup('P21/c'))).toBe(true);
  });

  it('keeps operators that match no table row as an unnamed group', () => {
    const ops = operationsFromHall('P 2 (3 0 0)');
    const group = identifySpaceGroup(ops, 'odd origin');
    expect(group.number).toBeNull();
    expect(group.symbol).toBe('odd origin');
  });
});
