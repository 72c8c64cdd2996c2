/**
 * The material catalogue of the demo workshop: the common allowed and blocked materials, each with the reason
 * members read (university EHS laser-cutter guidance and chemistry, see REFERENCE.md), cutting figures for the
 * starting-settings estimate (density: datasheets; heat of gasification: SFPE Handbook fire-properties chapter for
 * PMMA and POM, effective values for wood and paper; efficiency: calibrated so that 3 mm plywood, MDF and acrylic land
 * in the common-practice speed band at 40 W and 60 W — common practice, an admin may re-calibrate), what the space
 * sells by the sheet (each linked by its sheet code to the price version's sheet list in seeds/07_pricing.ts, the one
 * source of sheet prices) and two per-machine overrides.
 *
 * Compositions are honest about what the material carries: wood is cellulose and lignin, MDF adds its
 * urea-formaldehyde binder, wool, felt and leather are protein (nitrogen, and sulfur in wool). Nitrogen-bearing
 * materials are limited or blocked with the fume reason, never silently allowed (university EHS guidance).
 */
import type { Knex } from 'knex';

type Row = {
  name: string;
  category: string;
  composition: string[];
  rule: 'allowed' | 'limited' | 'blocked';
  reason: string;
  modes: string[];
  max_cut_mm?: number;
  density_g_cm3?: number;
  heat_gasification_j_g?: number;
  cut_efficiency?: number;
  sold_by_space?: boolean;
  /** the sheet code in the price version's sheet list (Pricing), which holds the price */
  sheet_sku?: string;
  sheet_size?: string;
};

const ALL = ['cut', 'engrave', 'score'];

export const SEED_MATERIALS: Row[] = [
  // allowed
  { name: 'Acrylic (PMMA)', category: 'plastic', composition: ['(C5H8O2)n'], rule: 'allowed', modes: ALL,
    reason: 'Cuts and engraves cleanly. It can flame: stay with the job, keep air assist and extraction on.',
    density_g_cm3: 1.18, heat_gasification_j_g: 1600, cut_efficiency: 0.25, sold_by_space: true, sheet_sku: 'pmma-3', sheet_size: '600 × 400 × 3 mm' },
  { name: 'Plywood (birch or poplar)', category: 'wood', composition: ['(C6H10O5)n', '(C10H12O3)n'], rule: 'allowed', modes: ALL,
    reason: 'Cuts well; glue lines char and can flare. Use laser-grade plywood (interior glue), never marine or treated ply.',
    density_g_cm3: 0.68, heat_gasification_j_g: 2500, cut_efficiency: 0.28, sold_by_space: true, sheet_sku: 'ply-3', sheet_size: '600 × 400 × 3 mm' },
  { name: 'MDF', category: 'wood', composition: ['(C6H10O5)n', '(C10H12O3)n', 'CH4N2O', 'CH2O'], rule: 'limited', modes: ALL,
    reason: 'Cuts well, but its urea-formaldehyde binder gives off formaldehyde and nitrogen-bearing smoke: extraction must run for the whole job, and wipe the lens afterwards.',
    density_g_cm3: 0.75, heat_gasification_j_g: 2500, cut_efficiency: 0.3, sold_by_space: true, sheet_sku: 'mdf-3', sheet_size: '600 × 400 × 3 mm' },
  { name: 'Solid wood', category: 'wood', composition: ['(C6H10O5)n', '(C10H12O3)n'], rule: 'allowed', modes: ALL,
    reason: 'Thin hardwood and softwood cut and engrave well. Resinous or oily woods flare: watch the job closely. Painted, stained or pressure-treated wood is not this material.',
    density_g_cm3: 0.6, heat_gasification_j_g: 2500, cut_efficiency: 0.25 },
  { name: 'Paper', category: 'paper', composition: ['(C6H10O5)n'], rule: 'allowed', modes: ALL, max_cut_mm: 1,
    reason: 'Cuts fast at low power. Loose scraps catch fire: hold sheets flat and clear the bed after each job.',
    density_g_cm3: 0.8, heat_gasification_j_g: 2000, cut_efficiency: 0.3 },
  { name: 'Card and cardboard', category: 'paper', composition: ['(C6H10O5)n'], rule: 'allowed', modes: ALL, max_cut_mm: 4,
    reason: 'Cuts well. Corrugated board can smoulder in the flutes: watch the job and never leave it.',
    density_g_cm3: 0.5, heat_gasification_j_g: 2000, cut_efficiency: 0.3, sold_by_space: true, sheet_sku: 'card-a3', sheet_size: 'A3 greyboard' },
  { name: 'Cork', category: 'wood', composition: ['(C6H10O5)n'], rule: 'allowed', modes: ALL, max_cut_mm: 6,
    reason: 'Cuts and engraves well. Agglomerated cork may hold a binder: ask a steward if the sheet is unlabelled.',
    density_g_cm3: 0.24, heat_gasification_j_g: 2500, cut_efficiency: 0.15 },
  { name: 'Natural fabric (cotton, linen)', category: 'textile', composition: ['(C6H10O5)n'], rule: 'allowed', modes: ALL, max_cut_mm: 3,
    reason: 'Plant fibres cut with sealed, browned edges. Synthetic or blended fabric is not this material: request it.',
    density_g_cm3: 0.4, heat_gasification_j_g: 2000, cut_efficiency: 0.3 },
  // limited: nitrogen-bearing natural materials (protein, resin binders): the fume reason is stated
  { name: 'Wool and felt', category: 'textile', composition: ['(C5H9NO2)n', 'C3H7NO2S'], rule: 'limited', modes: ['cut', 'engrave'], max_cut_mm: 3,
    reason: 'Protein fibre (keratin): nitrogen and sulfur, so the smoke carries hydrogen cyanide and sulfur compounds and smells strongly. Extraction must run; short jobs only. Synthetic felt is not this material.',
    density_g_cm3: 0.3, heat_gasification_j_g: 2000, cut_efficiency: 0.3 },
  { name: 'Vegetable-tanned leather', category: 'leather', composition: ['(C5H9NO2)n', 'C76H52O46'], rule: 'limited', modes: ALL, max_cut_mm: 4,
    reason: 'Protein (collagen) tanned with plant tannins: nitrogen in the smoke, which smells strongly. Extraction must run. Only vegetable-tanned, uncoated leather.',
    density_g_cm3: 0.9, heat_gasification_j_g: 2500, cut_efficiency: 0.15 },
  // limited
  { name: 'Acetal (POM)', category: 'plastic', composition: ['(CH2O)n'], rule: 'limited', modes: ['cut', 'engrave'], max_cut_mm: 6,
    reason: 'With caution: it gives off formaldehyde. Extraction must run; keep jobs short and do not lean over the machine.',
    density_g_cm3: 1.41, heat_gasification_j_g: 2400, cut_efficiency: 0.25 },
  { name: 'Anodised aluminium', category: 'metal', composition: ['Al2O3', 'Al'], rule: 'limited', modes: ['engrave'],
    reason: 'Engrave only: the beam marks the anodised layer. The metal beneath reflects the beam and cannot be cut on a CO2 cutter.' },
  { name: 'Glass', category: 'mineral', composition: ['SiO2'], rule: 'limited', modes: ['engrave'],
    reason: 'Engrave only (frosting); glass cracks if you try to cut it. Handle engraved pieces with care: small chips are sharp.' },
  { name: 'Stone, slate and tile', category: 'mineral', composition: ['SiO2', 'CaCO3'], rule: 'limited', modes: ['engrave'],
    reason: 'Engrave only. Glazed tile may contain lead or other metals: use only tile a steward has checked.' },
  // blocked: halogens
  { name: 'PVC and vinyl', category: 'plastic', composition: ['(C2H3Cl)n'], rule: 'blocked', modes: [],
    reason: 'Contains chlorine: it gives off hydrogen chloride gas, which harms your lungs and corrodes the optics and the machine.' },
  { name: 'PVDC (food wrap film)', category: 'plastic', composition: ['(C2H2Cl2)n'], rule: 'blocked', modes: [],
    reason: 'Contains chlorine: it gives off hydrogen chloride gas, which harms your lungs and corrodes the machine.' },
  { name: 'Neoprene', category: 'rubber', composition: ['(C4H5Cl)n'], rule: 'blocked', modes: [],
    reason: 'Contains chlorine: it gives off hydrogen chloride gas and burns readily.' },
  { name: 'PTFE', category: 'plastic', composition: ['(C2F4)n'], rule: 'blocked', modes: [],
    reason: 'Contains fluorine: it gives off hydrogen fluoride and toxic fluorinated fumes.' },
  { name: 'PVDF', category: 'plastic', composition: ['(C2H2F2)n'], rule: 'blocked', modes: [],
    reason: 'Contains fluorine: it gives off hydrogen fluoride, which is highly toxic and etches glass and optics.' },
  { name: 'FR-4 circuit board', category: 'composite', composition: ['(C18H20O3)n', 'C15H12Br4O2'], rule: 'blocked', modes: [],
    reason: 'Its flame retardant contains bromine (hydrogen bromide fumes), and the glass-fibre weave does not cut.' },
  { name: 'Faux leather (PVC or PU coated)', category: 'textile', composition: ['(C2H3Cl)n'], rule: 'blocked', modes: [],
    reason: 'Imitation leather is a PVC or polyurethane coating on fabric: hydrogen chloride or hydrogen cyanide when cut. Use vegetable-tanned leather instead.' },
  // blocked: other hazards
  { name: 'ABS', category: 'plastic', composition: ['(C3H3N)n', '(C4H6)n', '(C8H8)n'], rule: 'blocked', modes: [],
    reason: 'Contains nitrogen: it may give off hydrogen cyanide. It melts into a sticky residue and catches fire.' },
  { name: 'Polyurethane foam and rubber', category: 'foam', composition: ['(C17H16N2O4)n'], rule: 'blocked', modes: [],
    reason: 'Contains nitrogen: it gives off hydrogen cyanide and other toxic fumes, and foam burns fast.' },
  { name: 'Polycarbonate', category: 'plastic', composition: ['(C16H14O3)n'], rule: 'blocked', modes: [],
    reason: 'Chars and catches fire instead of cutting, with heavy smoke; the edge is brown and poor.' },
  { name: 'HDPE', category: 'plastic', composition: ['(C2H4)n'], rule: 'blocked', modes: [],
    reason: 'Melts and drips rather than cutting, and catches fire easily.' },
  { name: 'Polypropylene', category: 'plastic', composition: ['(C3H6)n'], rule: 'blocked', modes: [],
    reason: 'Melts and drips rather than cutting, and catches fire easily.' },
  { name: 'Polystyrene foam', category: 'foam', composition: ['(C8H8)n'], rule: 'blocked', modes: [],
    reason: 'Melts, drips and burns fast; a fire starts within seconds.' },
  { name: 'Solid polystyrene and HIPS', category: 'plastic', composition: ['(C8H8)n', '(C4H6)n'], rule: 'blocked', modes: [],
    reason: 'Melts and burns with thick, sooty styrene smoke instead of cutting cleanly.' },
  { name: 'Foam-core board', category: 'foam', composition: ['(C8H8)n', '(C6H10O5)n'], rule: 'blocked', modes: [],
    reason: 'A polystyrene foam core between paper faces: the core melts back and burns fast. Cut it with a knife.' },
  { name: 'Nylon (polyamide)', category: 'plastic', composition: ['(C6H11NO)n'], rule: 'blocked', modes: [],
    reason: 'Contains nitrogen: it may give off hydrogen cyanide. It melts and drips rather than cutting.' },
  { name: 'PET and PETG', category: 'plastic', composition: ['(C10H8O4)n'], rule: 'blocked', modes: [],
    reason: 'Melts, yellows and flames rather than cutting cleanly. Ask a steward about thin film for engraving.' },
  { name: 'EVA foam', category: 'foam', composition: ['(C2H4)n', '(C4H6O2)n'], rule: 'limited', modes: ['cut', 'engrave'], max_cut_mm: 6,
    reason: 'Ethylene-vinyl acetate (no chlorine: the vinyl here is vinyl acetate). It melts and flames easily: low power, several passes, never leave it, extraction on. At most 6 mm.' },
  { name: 'Painted, stained or pressure-treated wood', category: 'wood', composition: ['(C6H10O5)n', 'CuO', 'Cr2O3', 'As2O5'], rule: 'blocked', modes: [],
    reason: 'Preservatives (copper, chromium, arsenic compounds) and old paint (lead, or PVC-based coatings) go into the smoke. Use bare wood.' },
  { name: 'Fibreglass', category: 'composite', composition: ['SiO2', '(C18H20O3)n'], rule: 'blocked', modes: [],
    reason: 'Epoxy resin fumes and loose glass fibres; glass does not cut cleanly.' },
  { name: 'Carbon-fibre composite', category: 'composite', composition: ['C', '(C18H20O3)n'], rule: 'blocked', modes: [],
    reason: 'Epoxy resin fumes and fine carbon-fibre dust that harms lungs and shorts electronics.' },
  { name: 'Chrome-tanned or coated leather', category: 'leather', composition: ['Cr2O3'], rule: 'blocked', modes: [],
    reason: 'Chromium compounds go into the smoke, and coatings may be PVC. Only vegetable-tanned, uncoated leather is allowed.' },
  { name: 'Bare metal (steel, copper, aluminium)', category: 'metal', composition: ['Fe', 'Cu', 'Al'], rule: 'blocked', modes: [],
    reason: 'Reflects the beam back into the optics; these machines are not built for metal. Anodised aluminium may be engraved.' },
];

export async function seed(knex: Knex): Promise<void> {
  const rows = await knex('materials').insert(SEED_MATERIALS.map((m) => ({ sold_by_space: false, ...m }))).returning(['id', 'name']);
  const id = (name: string) => rows.find((r: { name: string }) => r.name === name)!.id as string;
  const machine = async (code: string) => ((await knex('machines').where({ code }).first('id')) as { id: string }).id;
  await knex('material_machine_overrides').insert([
    {
      material_id: id('Acrylic (PMMA)'), machine_id: await machine('laser-c'), max_cut_mm: 5,
      note: 'its 63.5 mm lens tapers thick cuts, so at most 5 mm.',
    },
    {
      material_id: id('MDF'), machine_id: await machine('laser-b'), rule: 'blocked',
      note: 'the studio extraction is not rated for MDF resin smoke; use Laser A or C.',
    },
  ]);
}
