/** The seeded catalogue agrees with the halogen rule (REFERENCE.md, Materials: university EHS laser-cutter guidance). */
import { describe, expect, it } from 'vitest';
import { SEED_MATERIALS } from '../../seeds/05_materials';
import { screenComposition } from '../../src/lib/halogen-screen';

describe('seeded materials', () => {
  it('every composition parses', () => {
    for (const m of SEED_MATERIALS) for (const f of m.composition) expect(() => screenComposition(f), `${m.name}: ${f}`).not.toThrow();
  });
  it('every halogen-bearing material is blocked, and so are the nitrogen-bearing plastics (ABS, polyurethane)', () => {
    for (const m of SEED_MATERIALS.filter((x) => x.composition.length)) {
      const s = screenComposition(m.composition);
      if (s.halogens.length) expect(m.rule, m.name).toBe('blocked');
      if ((s.elements.N ?? 0) > 0) expect(m.rule, m.name).toBe('blocked');
    }
    const names = SEED_MATERIALS.filter((m) => m.rule === 'blocked').map((m) => m.name);
    for (const n of ['PVC and vinyl', 'PTFE', 'ABS', 'Polycarbonate', 'HDPE', 'Neoprene', 'FR-4 circuit board']) expect(names).toContain(n);
  });
  it('blocked materials have no modes; others at least one; every reason is written out', () => {
    for (const m of SEED_MATERIALS) {
      expect(m.rule === 'blocked' ? m.modes.length === 0 : m.modes.length > 0, m.name).toBe(true);
      expect(m.reason.length, m.name).toBeGreaterThan(20);
      if (m.sold_by_space) expect(Number.isInteger(m.sheet_price_minor), m.name).toBe(true);
    }
  });
  it('anodised aluminium, glass and stone are engrave-only (REFERENCE.md)', () => {
    for (const n of ['Anodised aluminium', 'Glass', 'Stone, slate and tile']) expect(SEED_MATERIALS.find((m) => m.name === n)?.modes).toEqual(['engrave']);
  });
});
