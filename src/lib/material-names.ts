/**
 * Material names (pure; no I/O): a curated list of the names people give sheet materials — polymer names, common
 * abbreviations and trade-neutral shop names — mapped to a composition and a screening verdict, plus name
 * patterns that point to a halogen. Chemistry: REFERENCE.md, Materials (university EHS laser-cutter guidance;
 * compositions are the textbook repeat units, from memory).
 *
 * The screener reads a name before it reads a formula, so "PVC" is polyvinyl chloride, not phosphorus, vanadium
 * and carbon. The Materials search uses the same list, so "vinyl" or "cast acrylic sheet" find the entry.
 */

export type NameVerdict = 'blocked' | 'review';

export interface KnownMaterial {
  /** The name shown when it is recognised. */
  name: string;
  /** Lower-case names, abbreviations and shop names; matched as whole words. */
  names: string[];
  /** Formulas of the usual composition (textbook repeat units). Empty: a mixture with no single formula. */
  composition: string[];
  verdict: NameVerdict;
  reason: string;
  /** Words that find this entry's catalogue row in the Materials search. */
  catalogue: string[];
}

const CL = 'Contains chlorine: when cut it gives off hydrogen chloride gas, which harms lungs and corrodes the machine.';
const F = 'Contains fluorine: when cut it gives off hydrogen fluoride and toxic fluorinated fumes.';
const BR = 'Its flame retardant contains bromine (hydrogen bromide fumes); the glass-fibre weave does not cut.';
const N = 'Contains nitrogen: burning it may give off hydrogen cyanide. A steward decides whether and how it may be used.';
const MELT = 'Melts and drips rather than cutting, and catches fire easily.';

/** The curated list. Order does not matter; the longest matching name wins where two overlap. */
export const KNOWN_MATERIALS: readonly KnownMaterial[] = [
  { name: 'PVC (polyvinyl chloride)', names: ['pvc', 'upvc', 'polyvinyl chloride', 'poly vinyl chloride', 'vinyl', 'vinyl sheet', 'vinyl banner', 'foam pvc', 'expanded pvc', 'vinyl chloride', 'sticker vinyl', 'heat transfer vinyl', 'htv'],
    composition: ['(C2H3Cl)n'], verdict: 'blocked', reason: CL, catalogue: ['pvc'] },
  { name: 'CPVC (chlorinated PVC)', names: ['cpvc', 'chlorinated pvc', 'chlorinated polyvinyl chloride'], composition: ['(C2H3Cl)n', 'Cl'], verdict: 'blocked', reason: CL, catalogue: ['pvc'] },
  { name: 'PVDC', names: ['pvdc', 'polyvinylidene chloride', 'food wrap', 'cling film'], composition: ['(C2H2Cl2)n'], verdict: 'blocked', reason: CL, catalogue: ['pvdc'] },
  { name: 'Neoprene (chloroprene rubber)', names: ['neoprene', 'chloroprene', 'polychloroprene', 'cr rubber', 'wetsuit'], composition: ['(C4H5Cl)n'], verdict: 'blocked', reason: CL, catalogue: ['neoprene'] },
  { name: 'PTFE', names: ['ptfe', 'polytetrafluoroethylene'], composition: ['(C2F4)n'], verdict: 'blocked', reason: F, catalogue: ['ptfe'] },
  { name: 'PVDF', names: ['pvdf', 'polyvinylidene fluoride', 'polyvinylidene difluoride'], composition: ['(C2H2F2)n'], verdict: 'blocked', reason: F, catalogue: ['pvdf'] },
  { name: 'FEP', names: ['fep', 'fluorinated ethylene propylene'], composition: ['(C2F4)n', '(C3F6)n'], verdict: 'blocked', reason: F, catalogue: ['ptfe'] },
  { name: 'PCTFE', names: ['pctfe', 'polychlorotrifluoroethylene'], composition: ['(C2ClF3)n'], verdict: 'blocked', reason: `${F} It also contains chlorine.`, catalogue: ['ptfe'] },
  { name: 'ETFE', names: ['etfe', 'ethylene tetrafluoroethylene'], composition: ['(C2H4)n', '(C2F4)n'], verdict: 'blocked', reason: F, catalogue: ['ptfe'] },
  { name: 'FR-4 circuit board', names: ['fr 4', 'fr4', 'pcb', 'circuit board', 'printed circuit board', 'copper clad board'],
    composition: ['(C18H20O3)n', 'C15H12Br4O2'], verdict: 'blocked', reason: BR, catalogue: ['fr 4'] },
  { name: 'Polycarbonate', names: ['polycarbonate', 'pc'], composition: ['(C16H14O3)n'], verdict: 'blocked', reason: 'Chars and catches fire instead of cutting, with heavy smoke; the edge is brown and poor.', catalogue: ['polycarbonate'] },
  { name: 'ABS', names: ['abs', 'acrylonitrile butadiene styrene'], composition: ['(C3H3N)n', '(C4H6)n', '(C8H8)n'], verdict: 'blocked',
    reason: 'Contains nitrogen: it may give off hydrogen cyanide. It melts into a sticky residue and catches fire.', catalogue: ['abs'] },
  { name: 'HIPS (high-impact polystyrene)', names: ['hips', 'high impact polystyrene'], composition: ['(C8H8)n', '(C4H6)n'], verdict: 'blocked', reason: `${MELT} Styrene fumes.`, catalogue: ['polystyrene'] },
  { name: 'Polystyrene', names: ['polystyrene', 'ps', 'styrene', 'eps', 'xps', 'foam board insulation'], composition: ['(C8H8)n'], verdict: 'blocked', reason: `${MELT} Styrene fumes.`, catalogue: ['polystyrene'] },
  { name: 'Polyurethane', names: ['polyurethane', 'pu', 'pur', 'pu foam', 'pu leather', 'memory foam', 'upholstery foam'], composition: ['(C17H16N2O4)n'], verdict: 'blocked',
    reason: 'Contains nitrogen: it gives off hydrogen cyanide and other toxic fumes, and foam burns fast.', catalogue: ['polyurethane'] },
  { name: 'Faux leather', names: ['faux leather', 'vegan leather', 'leatherette', 'pleather', 'artificial leather', 'synthetic leather', 'imitation leather'],
    composition: ['(C2H3Cl)n'], verdict: 'blocked', reason: 'Usually PVC or polyurethane on a fabric backing: chlorine (hydrogen chloride) or nitrogen (hydrogen cyanide) fumes. Blocked unless a steward has the safety data sheet.', catalogue: ['faux leather'] },
  { name: 'Nylon (polyamide)', names: ['nylon', 'polyamide', 'pa', 'pa6', 'pa 6', 'pa66', 'pa 66', 'nylon 6', 'nylon 66'], composition: ['(C6H11NO)n'], verdict: 'blocked',
    reason: 'Contains nitrogen (hydrogen cyanide risk); it melts and drips rather than cutting.', catalogue: ['nylon'] },
  { name: 'PET / PETG', names: ['pet', 'petg', 'pet g', 'polyester', 'polyethylene terephthalate', 'apet'], composition: ['(C10H8O4)n'], verdict: 'review',
    reason: 'No halogen; it melts, yellows and can flame when cut. Thin film engraves or cuts with care: a steward decides.', catalogue: ['pet'] },
  { name: 'EVA foam', names: ['eva', 'eva foam', 'ethylene vinyl acetate', 'craft foam', 'foam sheet'], composition: ['(C2H4)n', '(C4H6O2)n'], verdict: 'review',
    reason: 'No halogen (the "vinyl" here is vinyl acetate, not vinyl chloride). It melts and flames easily: a steward decides, with extraction on and the job watched.', catalogue: ['eva'] },
  { name: 'Polypropylene', names: ['polypropylene', 'pp', 'corrugated plastic'], composition: ['(C3H6)n'], verdict: 'blocked', reason: MELT, catalogue: ['polypropylene'] },
  { name: 'Polyethylene', names: ['polyethylene', 'pe', 'hdpe', 'ldpe', 'polythene'], composition: ['(C2H4)n'], verdict: 'blocked', reason: MELT, catalogue: ['hdpe'] },
  { name: 'PVA (polyvinyl alcohol)', names: ['pva', 'polyvinyl alcohol', 'polyvinyl acetate'], composition: ['(C2H4O)n'], verdict: 'review', reason: 'No halogen (the "vinyl" here is not vinyl chloride). A steward reviews how it cuts.', catalogue: [] },
  { name: 'Acrylic (PMMA)', names: ['acrylic', 'pmma', 'polymethyl methacrylate', 'acrylic sheet', 'cast acrylic', 'extruded acrylic', 'fluorescent acrylic', 'mirror acrylic'],
    composition: ['(C5H8O2)n'], verdict: 'review', reason: 'No halogen or nitrogen. The catalogue entry says how it may be used.', catalogue: ['acrylic'] },
  { name: 'Acetal (POM)', names: ['acetal', 'pom', 'polyoxymethylene', 'polyacetal'], composition: ['(CH2O)n'], verdict: 'review', reason: 'No halogen; gives off formaldehyde. The catalogue entry says how it may be used.', catalogue: ['acetal'] },
  { name: 'MDF', names: ['mdf', 'medium density fibreboard', 'medium density fiberboard', 'hardboard', 'hdf'], composition: ['(C6H10O5)n', 'CH4N2O', 'CH2O'], verdict: 'review',
    reason: 'Wood fibre bound with urea-formaldehyde resin: nitrogen and formaldehyde in the smoke. The catalogue entry says how it may be used.', catalogue: ['mdf'] },
  { name: 'Wool and felt', names: ['wool', 'felt', 'wool felt', 'silk'], composition: ['(C5H9NO2)n'], verdict: 'review', reason: N, catalogue: ['wool'] },
  { name: 'Leather', names: ['leather', 'veg tan', 'vegetable tanned leather'], composition: ['(C5H9NO2)n'], verdict: 'review',
    reason: 'Protein (collagen): nitrogen in the smoke. Only vegetable-tanned, uncoated leather; chrome-tanned leather is blocked.', catalogue: ['leather'] },
  { name: 'Foam-core board', names: ['foam core', 'foamcore', 'foam board', 'foam core board'], composition: ['(C8H8)n', '(C6H10O5)n'], verdict: 'blocked',
    reason: 'A polystyrene foam core between paper faces: the core melts and burns fast.', catalogue: ['foam core'] },
];

const HALOGEN_WORD = /\b(?:per|poly|tetra|tri|di|mono|hexa|hydro)?(chlor|fluor(?!esc)|brom|iod)\w*/;
const HALOGEN_FREE = /\b(?:halogen free|non halogen|zero halogen|halogen less)\b/;

/** Lower-case words joined by single spaces: "FR-4" → "fr 4", "Vinyl  Sheet!" → "vinyl sheet". */
export function normalizeName(text: string): string {
  return text.normalize('NFKC').toLowerCase().replace(/[^a-z0-9]+/g, ' ').trim();
}

export interface NameMatch {
  material: KnownMaterial;
  /** The words that matched. */
  matched: string;
}

export interface NameReading {
  /** Recognised materials, the blocking ones first. */
  matches: NameMatch[];
  /** Halogen or flame-retardant words outside the recognised names. */
  patternVerdict: NameVerdict | null;
  patternReason: string | null;
  /** The halogen a name word points to ("chloro…" → Cl), if any. */
  patternHalogen: 'F' | 'Cl' | 'Br' | 'I' | null;
}

const WORD_HALOGEN: Record<string, 'F' | 'Cl' | 'Br' | 'I'> = { chlor: 'Cl', fluor: 'F', brom: 'Br', iod: 'I' };

/** Reads a name: curated names (whole words, longest first), then halogen patterns in the rest of the text. */
export function readName(text: string): NameReading {
  let rest = ` ${normalizeName(text)} `;
  const candidates: { m: KnownMaterial; n: string }[] = [];
  for (const m of KNOWN_MATERIALS) for (const n of m.names) candidates.push({ m, n });
  candidates.sort((a, b) => b.n.length - a.n.length);
  const matches: NameMatch[] = [];
  for (const { m, n } of candidates) {
    const needle = ` ${n} `;
    if (rest.includes(needle)) {
      rest = rest.split(needle).join('  ');
      if (!matches.some((x) => x.material === m)) matches.push({ material: m, matched: n });
    }
  }
  matches.sort((a, b) => (a.material.verdict === 'blocked' ? 0 : 1) - (b.material.verdict === 'blocked' ? 0 : 1));
  rest = rest.replace(/\s+/g, ' ');
  let patternVerdict: NameVerdict | null = null;
  let patternReason: string | null = null;
  let patternHalogen: NameReading['patternHalogen'] = null;
  const word = HALOGEN_WORD.exec(rest);
  if (word) {
    patternVerdict = 'blocked';
    patternHalogen = WORD_HALOGEN[word[1]!] ?? null;
    patternReason = `The name says "${word[0]}": a chlorine, fluorine, bromine or iodine compound gives off acid gases when cut.`;
  } else if (/\bhalogen/.test(rest) && !HALOGEN_FREE.test(rest)) {
    patternVerdict = 'blocked';
    patternReason = 'The name mentions a halogen: halogen-bearing materials give off acid gases when cut.';
  } else if (/\b(?:flame|fire) (?:retardant|resistant|retarded)\b|\bfr\b/.test(rest)) {
    patternVerdict = HALOGEN_FREE.test(rest) ? 'review' : 'blocked';
    patternReason = HALOGEN_FREE.test(rest)
      ? 'A halogen-free flame retardant: a steward checks the safety data sheet before it goes under the beam.'
      : 'Flame retardants are often brominated or chlorinated (acid gases when cut): blocked until a steward has the safety data sheet.';
  } else if (/\bvinyl\b/.test(rest)) {
    patternVerdict = 'blocked';
    patternReason = '"Vinyl" on its own usually means PVC (chlorine): blocked unless a steward has the safety data sheet.';
  }
  return { matches, patternVerdict, patternReason, patternHalogen };
}

/** The curated entry whose name or abbreviation is exactly `text` (case and punctuation ignored), if any. */
export function exactName(text: string): KnownMaterial | null {
  const n = normalizeName(text);
  if (!n) return null;
  return KNOWN_MATERIALS.find((m) => m.names.includes(n)) ?? null;
}

/** Words a catalogue search for `query` should also look for (the catalogue words of every recognised name). */
export function searchTerms(query: string): string[] {
  const q = normalizeName(query);
  if (!q) return [];
  const terms = new Set<string>([q]);
  for (const m of readName(query).matches) for (const c of m.material.catalogue) terms.add(c);
  // a prefix of a curated name also finds it while the member is still typing ("polyvin" → PVC)
  if (q.length >= 4) for (const m of KNOWN_MATERIALS) if (m.names.some((n) => n.startsWith(q))) for (const c of m.catalogue) terms.add(c);
  return [...terms];
}
