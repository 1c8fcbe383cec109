/**
 * Formulas as chemists write them. A CIF's _chemical_formula_sum is in Hill order (C, H, then
 * alphabetical: "B6 La", "I2 Pb"), which reads wrong for inorganic phases; the structural formula,
 * when given, is already in the author's order ("(CH3NH3)PbI3"). Otherwise an inorganic formula is put
 * in the electronegativity sequence of the IUPAC Red Book (2005, IR-4.4.2.1 and Table VI, from memory):
 * the more electropositive element first, as in LaB6, PbI2, Al2O3, CsPbBr3. A formula with carbon and
 * hydrogen keeps Hill order, the usual order for organic compounds (common practice).
 */

/** IUPAC Table VI, least electronegative first (from memory; H between groups 15 and 16). */
const SEQUENCE = (
  'Rn Xe Kr Ar Ne He Fr Cs Rb K Na Li Ra Ba Sr Ca Mg Be ' +
  'Lr No Md Fm Es Cf Bk Cm Am Pu Np U Pa Th Ac Lu Yb Tm Er Ho Dy Tb Gd Eu Sm Pm Nd Pr Ce La Y Sc ' +
  'Rf Hf Zr Ti Db Ta Nb V Sg W Mo Cr Bh Re Tc Mn Hs Os Ru Fe Mt Ir Rh Co Ds Pt Pd Ni Rg Au Ag Cu Cn Hg Cd Zn ' +
  'Nh Tl In Ga Al B Fl Pb Sn Ge Si C Mc Bi Sb As P N H Lv Po Te Se S O Ts At I Br Cl F'
).split(' ');
const RANK = new Map(SEQUENCE.map((symbol, i) => [symbol, i]));

/** "B6 La" → [["B", "6"], ["La", ""]]; null when the text is not a plain list of element symbols and counts. */
function terms(sum: string): Array<[string, string]> | null {
  const parts = sum.trim().split(/\s+/);
  const out: Array<[string, string]> = [];
  for (const part of parts) {
    const m = /^([A-Z][a-z]?)(\d*(?:\.\d+)?)$/.exec(part);
    if (!m || !RANK.has(m[1]!)) return null;
    out.push([m[1]!, m[2] === '1' ? '' : m[2]!]);
  }
  return out.length ? out : null;
}

/** A Hill-order sum formula in the order chemists write it (unchanged, spaces removed, when organic or unreadable). */
export function readableSumFormula(sum: string): string {
  const list = terms(sum);
  const compact = sum.replace(/\s+/g, '');
  if (!list) return compact;
  const symbols = new Set(list.map(([s]) => s));
  if (symbols.has('C') && symbols.has('H')) return compact;
  return [...list]
    .sort((a, b) => RANK.get(a[0])! - RANK.get(b[0])!)
    .map(([s, n]) => s + n)
    .join('');
}

/** The formula a CIF block gives, structural first, else its sum formula in readable order. */
export function cifFormula(structural: string | null, sum: string | null): string | null {
  if (structural && structural.trim()) return structural.replace(/\s+/g, '');
  if (sum && sum.trim()) return readableSumFormula(sum);
  return null;
}
