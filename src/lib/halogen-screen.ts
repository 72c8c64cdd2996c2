/**
 * Halogen screening of a chemical composition (pure; no I/O).
 *
 * parseFormula reads element symbols with counts, parentheses or brackets with a count or a repeat-unit
 * `n` (e.g. `(C2H3Cl)n`), hydrates joined by `·`, `.` or `*` (e.g. `CuSO4·5H2O`) and mixtures joined by `+`,
 * each part optionally led by a whole-number coefficient. A repeat unit counts once (the elements of one unit).
 * Unknown element symbols are an error, never a guess.
 *
 * screenComposition turns the elements into a verdict: any F, Cl, Br or I → `blocked` (acid gases such as HCl
 * and HF when cut); otherwise `review` by a steward, with a warning when nitrogen is present (possible
 * hydrogen cyanide).
 *
 * Before a formula is read as elements it is checked against the curated names (material-names.ts), so "PVC" is
 * polyvinyl chloride, not P, V and C; a text that is not a formula is tried as simple SMILES (`C=CCl`).
 * screenMaterial screens a name and a composition together.
 */
import { exactName, readName, type KnownMaterial } from './material-names';

/** Every element symbol of the periodic table (IUPAC, 1–118). */
export const ELEMENT_SYMBOLS: ReadonlySet<string> = new Set(
  (
    'H He Li Be B C N O F Ne Na Mg Al Si P S Cl Ar K Ca Sc Ti V Cr Mn Fe Co Ni Cu Zn Ga Ge As Se Br Kr Rb Sr Y Zr ' +
    'Nb Mo Tc Ru Rh Pd Ag Cd In Sn Sb Te I Xe Cs Ba La Ce Pr Nd Pm Sm Eu Gd Tb Dy Ho Er Tm Yb Lu Hf Ta W Re Os Ir ' +
    'Pt Au Hg Tl Pb Bi Po At Rn Fr Ra Ac Th Pa U Np Pu Am Cm Bk Cf Es Fm Md No Lr Rf Db Sg Bh Hs Mt Ds Rg Cn Nh ' +
    'Fl Mc Lv Ts Og'
  ).split(' '),
);

export const HALOGENS = ['F', 'Cl', 'Br', 'I'] as const;
export type Halogen = (typeof HALOGENS)[number];

export type Elements = Record<string, number>;

export class FormulaError extends Error {
  constructor(
    message: string,
    /** 0-based character position in the input where the problem is. */
    public readonly position: number,
  ) {
    super(message);
    this.name = 'FormulaError';
  }
}

export const FORMULA_MAX_LENGTH = 200;

const SEPARATORS = new Set(['+', '·', '.', '*', '•', '⋅']);
const CLOSING: Record<string, string> = { '(': ')', '[': ']', '{': '}' };

function add(into: Elements, from: Elements, times: number): void {
  for (const [el, n] of Object.entries(from)) into[el] = (into[el] ?? 0) + n * times;
}

/** Parses a formula into element counts; throws FormulaError with a readable message. */
export function parseFormula(input: string): Elements {
  const s = input.normalize('NFKC').replace(/\u00B7/g, '·');
  if (s.trim() === '') throw new FormulaError('Enter a chemical formula, e.g. (C5H8O2)n for acrylic.', 0);
  if (s.length > FORMULA_MAX_LENGTH) throw new FormulaError(`A formula has at most ${FORMULA_MAX_LENGTH} characters.`, FORMULA_MAX_LENGTH);
  let i = 0;

  const skipSpace = () => {
    while (i < s.length && /\s/.test(s[i]!)) i++;
  };
  const readNumber = (): number | null => {
    const m = /^\d+/.exec(s.slice(i));
    if (!m) return null;
    i += m[0].length;
    const n = Number(m[0]);
    if (n === 0) throw new FormulaError('A count of 0 is not a count; leave the element out instead.', i - m[0].length);
    if (n > 100_000) throw new FormulaError(`The count ${m[0]} is too large to be a formula count.`, i - m[0].length);
    return n;
  };

  // sequence := (element count? | open sequence close (count | 'n')?)+
  const readSequence = (closer: string | null): Elements => {
    const out: Elements = {};
    let any = false;
    for (;;) {
      skipSpace();
      const c = s[i];
      if (c === undefined) break;
      if (closer !== null && c === closer) break;
      if (c in CLOSING) {
        const open = i;
        i++;
        const inner = readSequence(CLOSING[c]!);
        if (s[i] !== CLOSING[c]) throw new FormulaError(`The bracket opened at character ${open + 1} is never closed.`, open);
        i++;
        let times = readNumber();
        if (times === null && s[i] === 'n') {
          i++; // a repeat unit: the elements of one unit
          times = 1;
        }
        add(out, inner, times ?? 1);
        any = true;
        continue;
      }
      if (/[A-Z]/.test(c)) {
        const start = i;
        i++;
        while (i < s.length && /[a-z]/.test(s[i]!)) i++;
        let symbol = s.slice(start, i);
        if (!ELEMENT_SYMBOLS.has(symbol)) {
          // a trailing repeat-unit "n" without brackets, e.g. C2H3Cln: say how to write it
          if (symbol.length > 1 && ELEMENT_SYMBOLS.has(symbol.slice(0, -1)) && symbol.endsWith('n') ) {
            throw new FormulaError(`"${symbol}" is not an element symbol; write a repeat unit in brackets, e.g. (${symbol.slice(0, -1)})n.`, start);
          }
          throw new FormulaError(`"${symbol}" is not an element symbol (check the capitals: Cl, not CL).`, start);
        }
        const n = readNumber() ?? 1;
        out[symbol] = (out[symbol] ?? 0) + n;
        any = true;
        continue;
      }
      if (SEPARATORS.has(c)) break;
      if (c === ')' || c === ']' || c === '}') throw new FormulaError(`The "${c}" at character ${i + 1} closes nothing.`, i);
      if (/[a-z]/.test(c)) throw new FormulaError(`"${c}" at character ${i + 1}: element symbols start with a capital letter.`, i);
      if (/\d/.test(c)) throw new FormulaError(`A number at character ${i + 1} must follow an element or a bracket.`, i);
      throw new FormulaError(`"${c}" at character ${i + 1} is not part of a chemical formula.`, i);
    }
    if (!any) throw new FormulaError(`Expected an element symbol at character ${i + 1}.`, i);
    return out;
  };

  const total: Elements = {};
  for (;;) {
    skipSpace();
    const coefficient = readNumber() ?? 1;
    skipSpace();
    const part = readSequence(null);
    add(total, part, coefficient);
    skipSpace();
    if (i >= s.length) break;
    if (SEPARATORS.has(s[i]!)) {
      i++;
      continue;
    }
    throw new FormulaError(`Unexpected "${s[i]}" at character ${i + 1}.`, i);
  }
  return total;
}

/** SMILES atoms outside brackets (the organic subset), longest first; lower case is aromatic. */
const SMILES_ORGANIC = ['Cl', 'Br', 'B', 'C', 'N', 'O', 'P', 'S', 'F', 'I', 'b', 'c', 'n', 'o', 'p', 's'];
const SMILES_BOND = /[-=#$:/\\.()%0-9+@*]/;

/**
 * Reads the heavy atoms of a simple SMILES string (e.g. `C=CCl` for vinyl chloride, `FC(F)=C(F)F`): the organic
 * subset, aromatic lower case and bracket atoms such as `[Na+]`. Implicit hydrogens are not counted. Returns null
 * when the text is not SMILES.
 */
export function parseSmiles(input: string): Elements | null {
  const s = input.trim();
  if (!s || s.length > FORMULA_MAX_LENGTH || /\s/.test(s)) return null;
  const out: Elements = {};
  let i = 0;
  let atoms = 0;
  while (i < s.length) {
    const c = s[i]!;
    if (c === '[') {
      const close = s.indexOf(']', i);
      if (close < 0) return null;
      const m = /^\d*([A-Z][a-z]?|[bcnops]|se|as)/.exec(s.slice(i + 1, close));
      if (!m) return null;
      let sym = m[1]!;
      sym = sym[0]!.toUpperCase() + sym.slice(1);
      if (!ELEMENT_SYMBOLS.has(sym)) {
        if (ELEMENT_SYMBOLS.has(sym[0]!)) sym = sym[0]!;
        else return null;
      }
      out[sym] = (out[sym] ?? 0) + 1;
      atoms++;
      i = close + 1;
      continue;
    }
    const atom = SMILES_ORGANIC.find((a) => s.startsWith(a, i));
    if (atom) {
      const sym = atom.length === 1 ? atom.toUpperCase() : atom;
      out[sym] = (out[sym] ?? 0) + 1;
      atoms++;
      i += atom.length;
      continue;
    }
    if (SMILES_BOND.test(c)) {
      i++;
      continue;
    }
    return null;
  }
  return atoms ? out : null;
}

export type ScreenVerdict = 'blocked' | 'review';

export interface ScreenResult {
  elements: Elements;
  halogens: Halogen[];
  verdict: ScreenVerdict;
  reason: string;
  /** The curated material a name (or an abbreviation typed as a formula) was read as. */
  matchedName?: string;
  /** Things worth a second look that do not change the verdict (e.g. a polymer written without carbon). */
  warnings: string[];
}

export const ACID_GAS_REASON =
  'Contains a halogen; when cut or engraved it gives off acid gases (such as hydrogen chloride or hydrogen fluoride) that harm people and corrode the machine.';
export const NITROGEN_REASON =
  'No halogen found, but it contains nitrogen: burning it may give off hydrogen cyanide. A steward must review it before it goes under the beam.';
export const REVIEW_REASON =
  'No halogen or nitrogen found in the formula. A steward still reviews it (fire, fumes and how it cuts) before it goes under the beam.';
export const UNKNOWN_NAME_REASON =
  'Not a name we recognise and no formula given: a steward needs the formula from the safety data sheet before it goes under the beam.';

interface ReadFormula {
  elements: Elements;
  matchedName?: string;
  known?: KnownMaterial;
  warnings: string[];
}

/** One formula: an abbreviation such as PVC first, then a chemical formula, then simple SMILES. */
function readOneFormula(text: string): ReadFormula {
  const known = exactName(text);
  if (known) {
    const elements: Elements = {};
    for (const f of known.composition) add(elements, parseFormula(f), 1);
    return { elements, matchedName: known.name, known, warnings: [`"${text.trim()}" was read as ${known.name}, not as element symbols.`] };
  }
  const warnings: string[] = [];
  let elements: Elements;
  try {
    elements = parseFormula(text);
  } catch (err) {
    const smiles = err instanceof FormulaError ? parseSmiles(text) : null;
    if (!smiles) throw err;
    elements = smiles;
    warnings.push(`"${text.trim()}" was read as SMILES (atoms only, hydrogens not counted).`);
  }
  if (/[)\]}]\s*n\b/.test(text) && !(elements.C ?? 0)) {
    warnings.push('A polymer repeat unit without carbon is unusual: check the formula on the safety data sheet.');
  }
  return { elements, warnings };
}

/** Screens one or more formulas (a material's composition); the elements are the sum of all of them. */
export function screenComposition(composition: string | readonly string[]): ScreenResult {
  const formulas = typeof composition === 'string' ? [composition] : composition;
  if (formulas.length === 0) throw new FormulaError('Enter a chemical formula, e.g. (C5H8O2)n for acrylic.', 0);
  const elements: Elements = {};
  const warnings: string[] = [];
  let known: KnownMaterial | undefined;
  for (const f of formulas) {
    const r = readOneFormula(f);
    add(elements, r.elements, 1);
    warnings.push(...r.warnings);
    if (r.known && (!known || r.known.verdict === 'blocked')) known = r.known;
  }
  const halogens = HALOGENS.filter((h) => (elements[h] ?? 0) > 0);
  const named = known ? { matchedName: known.name } : {};
  if (halogens.length) {
    return { elements, halogens, verdict: 'blocked', reason: `${ACID_GAS_REASON} Found: ${halogens.join(', ')}.`, ...named, warnings };
  }
  if (known?.verdict === 'blocked') return { elements, halogens, verdict: 'blocked', reason: known.reason, ...named, warnings };
  if ((elements.N ?? 0) > 0) return { elements, halogens, verdict: 'review', reason: NITROGEN_REASON, ...named, warnings };
  return { elements, halogens, verdict: 'review', reason: REVIEW_REASON, ...named, warnings };
}

/**
 * Screens a material by its name, its composition, or both. Anything that blocks wins: a halogen in the
 * composition, a recognised blocked name (PVC, FR-4…), or a halogen word in the name (chloro-, fluoro-…).
 * With a name alone, a recognised name brings its usual composition; an unrecognised one is left for review.
 */
export function screenMaterial(input: { name?: string | null; composition?: string | readonly string[] | null }): ScreenResult {
  const formulas = input.composition == null ? [] : typeof input.composition === 'string' ? [input.composition] : [...input.composition];
  const hasFormula = formulas.some((f) => f.trim() !== '');
  const byFormula = hasFormula ? screenComposition(formulas.filter((f) => f.trim() !== '')) : null;
  const reading = input.name && input.name.trim() ? readName(input.name) : null;
  const top = reading?.matches[0]?.material;
  const elements: Elements = { ...(byFormula?.elements ?? {}) };
  if (!byFormula && top) for (const f of top.composition) add(elements, parseFormula(f), 1);
  if (reading?.patternHalogen && !(elements[reading.patternHalogen] ?? 0)) elements[reading.patternHalogen] = 1;
  // a blocking recognised name carries its halogens even when a different formula was typed
  for (const m of reading?.matches ?? []) {
    if (m.material.verdict !== 'blocked') continue;
    for (const f of m.material.composition) {
      const e = parseFormula(f);
      for (const h of HALOGENS) if ((e[h] ?? 0) > 0 && !(elements[h] ?? 0)) elements[h] = e[h]!;
    }
  }
  const halogens = HALOGENS.filter((h) => (elements[h] ?? 0) > 0);
  const matchedName = top?.name ?? byFormula?.matchedName;
  const named = matchedName ? { matchedName } : {};
  const warnings = [...(byFormula?.warnings ?? [])];
  const blockedMatch = reading?.matches.find((m) => m.material.verdict === 'blocked')?.material;
  if (halogens.length) {
    const why = blockedMatch && HALOGENS.some((h) => blockedMatch.composition.some((f) => (parseFormula(f)[h] ?? 0) > 0)) ? `${blockedMatch.name}: ${blockedMatch.reason} ` : reading?.patternHalogen ? `${reading.patternReason} ` : '';
    return { elements, halogens, verdict: 'blocked', reason: `${why}${ACID_GAS_REASON} Found: ${halogens.join(', ')}.`, ...named, warnings };
  }
  if (blockedMatch) return { elements, halogens, verdict: 'blocked', reason: `${blockedMatch.name}: ${blockedMatch.reason}`, ...named, warnings };
  if (byFormula?.verdict === 'blocked') return { ...byFormula, elements, halogens, ...named, warnings };
  if (reading?.patternVerdict === 'blocked') return { elements, halogens, verdict: 'blocked', reason: reading.patternReason!, ...named, warnings };
  if ((elements.N ?? 0) > 0) return { elements, halogens, verdict: 'review', reason: top ? `${top.name}: ${top.reason}` : NITROGEN_REASON, ...named, warnings };
  if (reading?.patternVerdict === 'review') return { elements, halogens, verdict: 'review', reason: reading.patternReason!, ...named, warnings };
  if (top) return { elements, halogens, verdict: 'review', reason: `${top.name}: ${top.reason}`, ...named, warnings };
  if (byFormula) return { ...byFormula, elements, halogens, ...named, warnings };
  return { elements, halogens, verdict: 'review', reason: UNKNOWN_NAME_REASON, warnings };
}
