/** The formula parser and the halogen screen. Chemistry of the examples: REFERENCE.md, Materials section. */
import { describe, expect, it } from 'vitest';
import { FormulaError, parseFormula, parseSmiles, screenComposition, screenMaterial } from '../../src/lib/halogen-screen';

describe('parseFormula', () => {
  it('reads element symbols with counts', () => {
    expect(parseFormula('H2O')).toEqual({ H: 2, O: 1 });
    expect(parseFormula('C6H12O6')).toEqual({ C: 6, H: 12, O: 6 });
    expect(parseFormula('NaCl')).toEqual({ Na: 1, Cl: 1 });
  });

  it('reads repeat units: PVC (C2H3Cl)n and PMMA (C5H8O2)n (REFERENCE.md, Materials)', () => {
    expect(parseFormula('(C2H3Cl)n')).toEqual({ C: 2, H: 3, Cl: 1 });
    expect(parseFormula('(C5H8O2)n')).toEqual({ C: 5, H: 8, O: 2 });
  });

  it('multiplies brackets by their count, also nested and with square brackets', () => {
    expect(parseFormula('Ca(OH)2')).toEqual({ Ca: 1, O: 2, H: 2 });
    expect(parseFormula('Al2(SO4)3')).toEqual({ Al: 2, S: 3, O: 12 });
    expect(parseFormula('K4[Fe(CN)6]')).toEqual({ K: 4, Fe: 1, C: 6, N: 6 });
    expect(parseFormula('[CH2CH(Cl)]n')).toEqual({ C: 2, H: 3, Cl: 1 });
  });

  it('reads hydrates with ·, . or * and a leading coefficient (by hand: CuSO4·5H2O has 9 O, 10 H)', () => {
    const expected = { Cu: 1, S: 1, O: 9, H: 10 };
    expect(parseFormula('CuSO4·5H2O')).toEqual(expected);
    expect(parseFormula('CuSO4.5H2O')).toEqual(expected);
    expect(parseFormula('CuSO4 * 5 H2O')).toEqual(expected);
  });

  it('sums the parts of a mixture joined by +', () => {
    expect(parseFormula('(C5H8O2)n + (C2H3Cl)n')).toEqual({ C: 7, H: 11, O: 2, Cl: 1 });
    expect(parseFormula('2H2 + O2')).toEqual({ H: 4, O: 2 });
  });

  it('refuses unknown element symbols with a clear message instead of guessing', () => {
    expect(() => parseFormula('C2H3Xx')).toThrow(FormulaError);
    expect(() => parseFormula('C2H3Xx')).toThrow('"Xx" is not an element symbol');
    expect(() => parseFormula('CL2')).toThrow(/"L" is not an element symbol.*check the capitals/);
    expect(() => parseFormula('C2H3Cln')).toThrow('write a repeat unit in brackets, e.g. (Cl)n');
  });

  it('refuses malformed input with the position', () => {
    for (const bad of ['', '   ', '(C2H4', 'C2H4)', 'c2h4', '2', 'C0', 'C2H4 +', 'C2-H4', 'PVC plastic']) {
      expect(() => parseFormula(bad), bad).toThrow(FormulaError);
    }
    try {
      parseFormula('(C2H4');
    } catch (e) {
      expect((e as FormulaError).position).toBe(0);
      expect((e as FormulaError).message).toContain('never closed');
    }
  });

  it('refuses very long input', () => {
    expect(() => parseFormula('C'.repeat(201))).toThrow('at most 200');
  });
});

describe('screenComposition (halogen rule: REFERENCE.md, Materials — university EHS laser-cutter guidance)', () => {
  it.each([
    ['PVC', '(C2H3Cl)n', ['Cl']],
    ['PVDC', '(C2H2Cl2)n', ['Cl']],
    ['neoprene', '(C4H5Cl)n', ['Cl']],
    ['PTFE', '(C2F4)n', ['F']],
    ['PVDF', '(C2H2F2)n', ['F']],
    ['FR-4 flame retardant (tetrabromobisphenol A)', 'C15H12Br4O2', ['Br']],
    ['an iodide', 'KI', ['I']],
  ])('%s %s → blocked, acid-gas reason', (_name, formula, halogens) => {
    const r = screenComposition(formula);
    expect(r.verdict).toBe('blocked');
    expect(r.halogens).toEqual(halogens);
    expect(r.reason).toMatch(/acid gas/);
  });

  it('the documented example: (C2H3Cl)n → elements, halogens and verdict', () => {
    expect(screenComposition('(C2H3Cl)n')).toMatchObject({ elements: { C: 2, H: 3, Cl: 1 }, halogens: ['Cl'], verdict: 'blocked' });
  });

  it('nitrogen-bearing (ABS acrylonitrile unit C3H3N, polyurethane) → review with the hydrogen cyanide warning (REFERENCE.md)', () => {
    const r = screenComposition('(C3H3N)n + (C4H6)n + (C8H8)n');
    expect(r.verdict).toBe('review');
    expect(r.halogens).toEqual([]);
    expect(r.reason).toMatch(/hydrogen cyanide/);
  });

  it('PMMA and POM → review by a steward, no halogen (REFERENCE.md)', () => {
    for (const f of ['(C5H8O2)n', '(CH2O)n']) {
      const r = screenComposition(f);
      expect(r.verdict).toBe('review');
      expect(r.reason).not.toMatch(/cyanide/);
      expect(r.reason).toMatch(/steward/);
    }
  });

  it('screens several formulas together: one halogen anywhere blocks', () => {
    expect(screenComposition(['(C18H20O3)n', 'C15H12Br4O2']).verdict).toBe('blocked');
    expect(() => screenComposition([])).toThrow(FormulaError);
  });
});

describe('name screening (curated names; REFERENCE.md, Materials — university EHS laser-cutter guidance)', () => {
  it.each([
    ['PVC', 'Cl'], ['ptfe', 'F'], ['Vinyl sheet', 'Cl'], ['FR-4', 'Br'], ['PCB', 'Br'], ['CPVC', 'Cl'], ['neoprene', 'Cl'],
    ['chloroprene rubber', 'Cl'], ['PVDF', 'F'], ['FEP', 'F'], ['PCTFE', 'F'],
  ])('"%s" → blocked, carrying %s', (name, halogen) => {
    const r = screenMaterial({ name });
    expect(r.verdict).toBe('blocked');
    expect(r.halogens).toContain(halogen);
    expect(r.matchedName).toBeTruthy();
  });
  it('short abbreviations typed as a formula are read as the material, not as element symbols', () => {
    // as elements, PVC would be P, V, C (no halogen) and HIPS would be H, I, P, S (iodine): both wrong
    expect(screenComposition('PVC')).toMatchObject({ verdict: 'blocked', halogens: ['Cl'], matchedName: 'PVC (polyvinyl chloride)' });
    expect(screenComposition('HIPS')).toMatchObject({ verdict: 'blocked', halogens: [], matchedName: 'HIPS (high-impact polystyrene)' });
    expect(screenComposition('HIPS').elements.I).toBeUndefined();
    for (const abbr of ['PCB', 'PP', 'PS', 'PC', 'PU', 'CPVC']) {
      const r = screenComposition(abbr);
      expect(r.matchedName, abbr).toBeTruthy();
      expect(r.verdict, abbr).toBe('blocked');
      expect(r.elements.P ?? 0, abbr).toBe(0);
    }
  });
  it('nitrogen-bearing names are blocked or left for review with the cyanide reason: ABS, polyurethane, nylon, wool', () => {
    for (const n of ['ABS', 'PU foam', 'nylon 66']) expect(screenMaterial({ name: n }).verdict, n).toBe('blocked');
    const wool = screenMaterial({ name: 'wool felt' });
    expect(wool.verdict).toBe('review');
    expect(wool.reason).toMatch(/cyanide/);
  });
  it('name patterns: chloro-/fluoro-/bromo-/iodo-, "halogen", "flame retardant" and "vinyl" → blocked with a reason', () => {
    for (const n of ['Chlorinated rubber mat', 'fluoropolymer film', 'brominated board', 'iodinated sheet', 'halogenated foam', 'flame retardant panel', 'vinyl wrap']) {
      const r = screenMaterial({ name: n });
      expect(r.verdict, n).toBe('blocked');
      expect(r.reason.length, n).toBeGreaterThan(30);
    }
    expect(screenMaterial({ name: 'Chlorinated rubber mat' }).halogens).toEqual(['Cl']);
    // not halogens: fluorescent acrylic, halogen-free retardant (review), vinyl acetate (EVA)
    expect(screenMaterial({ name: 'Fluorescent acrylic' })).toMatchObject({ verdict: 'review', halogens: [] });
    expect(screenMaterial({ name: 'halogen-free flame retardant board' }).verdict).toBe('review');
    expect(screenMaterial({ name: 'Ethylene vinyl acetate foam' })).toMatchObject({ verdict: 'review', halogens: [], matchedName: 'EVA foam' });
  });
  it('a blocking name wins over a harmless formula, and a halogen formula wins over a harmless name', () => {
    expect(screenMaterial({ name: 'Vinyl banner', composition: '(C6H10O5)n' })).toMatchObject({ verdict: 'blocked', halogens: ['Cl'] });
    expect(screenMaterial({ name: 'Birch sheet', composition: '(C2H3Cl)n' })).toMatchObject({ verdict: 'blocked', halogens: ['Cl'] });
  });
  it('an unrecognised name alone is left for review and asks for the formula', () => {
    const r = screenMaterial({ name: 'Bamboo ply' });
    expect(r.verdict).toBe('review');
    expect(r.matchedName).toBeUndefined();
    expect(r.reason).toMatch(/formula/);
  });
});

describe('SMILES and polymer warnings', () => {
  it('reads simple SMILES for halogens: vinyl chloride C=CCl, tetrafluoroethylene FC(F)=C(F)F, bromobenzene Brc1ccccc1', () => {
    expect(parseSmiles('C=CCl')).toEqual({ C: 2, Cl: 1 });
    expect(screenComposition('C=CCl')).toMatchObject({ verdict: 'blocked', halogens: ['Cl'] });
    expect(screenComposition('FC(F)=C(F)F').halogens).toEqual(['F']);
    expect(screenComposition('Brc1ccccc1')).toMatchObject({ halogens: ['Br'], elements: { Br: 1, C: 6 } });
    expect(screenComposition('[Na+].[Cl-]').halogens).toEqual(['Cl']);
    expect(screenComposition('c1ccccc1')).toMatchObject({ verdict: 'review', halogens: [] });
  });
  it('text that is neither a formula nor SMILES is still an error', () => {
    expect(() => screenComposition('C2Qz4')).toThrow(FormulaError);
    expect(parseSmiles('hello world')).toBeNull();
  });
  it('a polymer repeat unit without carbon gets a warning', () => {
    expect(screenComposition('(SiO2)n').warnings.join(' ')).toMatch(/without carbon/);
    expect(screenComposition('(C5H8O2)n').warnings).toEqual([]);
  });
});
