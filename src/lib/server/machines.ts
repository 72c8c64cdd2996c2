/** Machines: all SQL for this area. */
import type { Knex } from 'knex';
import { db } from './db';
import type { MachineStatus, TubeType } from '../machines-shared';

export interface Machine {
  id: string;
  code: string;
  name: string;
  powerW: number;
  tubeType: TubeType;
  wavelengthUm: number;
  bedWidthMm: number;
  bedDepthMm: number;
  beamDiameterMm: number;
  divergenceMrad: number;
  lensFocalMm: number;
  coolantType: 'water' | 'air';
  status: MachineStatus;
}

type Row = {
  id: string; code: string; name: string; power_w: number; tube_type: TubeType; wavelength_um: number;
  bed_width_mm: number; bed_depth_mm: number; beam_diameter_mm: number; divergence_mrad: number;
  lens_focal_mm: number; coolant_type: 'water' | 'air'; status: MachineStatus;
};

function toMachine(r: Row): Machine {
  return {
    id: r.id,
    code: r.code,
    name: r.name,
    powerW: Number(r.power_w),
    tubeType: r.tube_type,
    wavelengthUm: Number(r.wavelength_um),
    bedWidthMm: r.bed_width_mm,
    bedDepthMm: r.bed_depth_mm,
    beamDiameterMm: Number(r.beam_diameter_mm),
    divergenceMrad: Number(r.divergence_mrad),
    lensFocalMm: Number(r.lens_focal_mm),
    coolantType: r.coolant_type,
    status: r.status,
  };
}

/** Machines in use (not retired), by name. */
export async function listMachines(trx: Knex | Knex.Transaction = db()): Promise<Machine[]> {
  const rows = (await trx('machines').whereNull('retired_at').orderBy('name')) as Row[];
  return rows.map(toMachine);
}

export async function getMachine(id: string, trx: Knex | Knex.Transaction = db()): Promise<Machine | null> {
  const row = (await trx('machines').where({ id }).first()) as Row | undefined;
  return row ? toMachine(row) : null;
}

export async function getMachineByCode(code: string, trx: Knex | Knex.Transaction = db()): Promise<Machine | null> {
  const row = (await trx('machines').where({ code }).whereNull('retired_at').first()) as Row | undefined;
  return row ? toMachine(row) : null;
}

/** The public shape of GET /api/machines. */
export function machineSummary(m: Machine) {
  return { id: m.id, code: m.code, name: m.name, powerW: m.powerW, tubeType: m.tubeType, wavelengthUm: m.wavelengthUm, status: m.status };
}
