/** Field schemas of the material screens and routes (shared by server routes and islands; no I/O). */
import { z } from '@lib/zod';
import { MATERIAL_CATEGORIES, MATERIAL_MODES, MATERIAL_RULES } from './material-rules';

export const materialRule = z.enum(MATERIAL_RULES, { error: `A rule is one of ${MATERIAL_RULES.join(', ')}.` });
export const materialMode = z.enum(MATERIAL_MODES, { error: `A mode is one of ${MATERIAL_MODES.join(', ')}.` });
export const materialCategory = z.enum(MATERIAL_CATEGORIES, { error: `A category is one of ${MATERIAL_CATEGORIES.join(', ')}.` });

const optionalPositive = (max: number, label: string) =>
  z.number({ error: `${label} must be a number.` }).gt(0, `${label} must be above 0.`).max(max, `${label} must be at most ${max}.`).nullable();

export const formulaText = z.string().trim().min(1, 'Enter a chemical formula.').max(200, 'Use at most 200 characters.');

export const materialInput = z
  .object({
    name: z.string().trim().min(1, 'Enter a name.').max(120, 'Use at most 120 characters.'),
    category: materialCategory,
    composition: z.array(formulaText).max(10, 'At most 10 formulas.'),
    rule: materialRule,
    reason: z.string().trim().min(1, 'Say why, in words members read.').max(1000, 'Use at most 1000 characters.'),
    modes: z.array(materialMode).max(3).transform((m) => [...new Set(m)]),
    maxCutMm: optionalPositive(100, 'Maximum cut thickness'),
    densityGPerCm3: optionalPositive(25, 'Density'),
    heatOfGasificationJPerG: optionalPositive(100000, 'Heat of gasification'),
    cutEfficiency: z.number().gt(0, 'Efficiency must be above 0.').max(1, 'Efficiency must be at most 1.').nullable(),
    soldBySpace: z.boolean(),
    /** the sheet's code in the price list on Pricing, which holds its price */
    sheetSku: z.string().trim().regex(/^[a-z0-9][a-z0-9-]{0,39}$/, 'A sheet code from the price list, such as ply-3.').nullable().optional(),
    /** older callers only: null, or the price in force (prices are set on Pricing) */
    sheetPriceMinor: z.number().int().min(0).max(100_000_000).nullable().optional(),
    /** read-only echoes of GET /api/material-rules (the price list's), accepted so a read material can be sent back */
    sheetName: z.string().max(120).nullable().optional(),
    sheetCurrency: z.string().max(3).nullable().optional(),
    sheetSize: z.string().trim().max(60).nullable(),
  })
  .strict()
  .superRefine((m, ctx) => {
    if (m.soldBySpace && !m.sheetSku) ctx.addIssue({ code: 'custom', path: ['sheetSku'], message: 'A material the space sells needs its sheet from the price list.' });
    if (m.rule !== 'blocked' && m.modes.length === 0) ctx.addIssue({ code: 'custom', path: ['modes'], message: 'Pick at least one mode, or block the material.' });
  });

export type MaterialInputData = z.infer<typeof materialInput>;

export const overrideInput = z
  .object({
    rule: materialRule.nullable(),
    modes: z.array(materialMode).max(3).nullable(),
    maxCutMm: optionalPositive(100, 'Maximum cut thickness'),
    note: z.string().trim().max(500).nullable(),
  })
  .strict();

export const declaredMaterial = z
  .object({
    materialId: z.string().min(1).max(64),
    thicknessMm: z.number().gt(0, 'Thickness must be above 0 mm.').max(100, 'Thickness must be at most 100 mm.'),
    mode: materialMode,
  })
  .strict();
