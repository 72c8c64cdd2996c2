/**
 * The booking form's material rows as the form holds them, apart from the picker (BookingMaterials), so the
 * form can keep and send them while the picker's code and the material rules load after the calendar.
 */
import type { MaterialMode } from '@lib/material-rules';

export interface MaterialRow {
  key: number;
  materialId: string;
  thicknessMm: string;
  mode: MaterialMode;
}

let nextKey = 1;
export const newRow = (): MaterialRow => ({ key: nextKey++, materialId: '', thicknessMm: '3', mode: 'cut' });

/** Rows with a material chosen, as the API takes them. */
export function declared(rows: MaterialRow[]) {
  return rows.filter((r) => r.materialId).map((r) => ({ materialId: r.materialId, thicknessMm: Number(r.thicknessMm), mode: r.mode }));
}

/** The picker's first words, shown at once, also while its code is still loading. */
export const MATERIALS_HINT = 'Declare what goes in the machine. PVC, vinyl and other chlorine-bearing plastics never go in a laser.';
