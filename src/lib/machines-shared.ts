/** Machine vocabulary shared by server and client; no I/O. */
import type { ClearanceLevel } from './clearance-rules';
export const MACHINE_STATUSES = ['in service', 'degraded', 'out of service'] as const;
export type MachineStatus = (typeof MACHINE_STATUSES)[number];

export const TUBE_TYPES = ['dc_glass', 'rf_metal'] as const;
export type TubeType = (typeof TUBE_TYPES)[number];

export const TUBE_LABELS: Record<TubeType, string> = {
  dc_glass: 'Glass tube (DC, water-cooled)',
  rf_metal: 'Metal tube (RF-excited)',
};

export const STATUS_TEXT: Record<MachineStatus, { label: string; icon: string; tone: 'ok' | 'warn' | 'stop' }> = {
  'in service': { label: 'In service', icon: '●', tone: 'ok' },
  degraded: { label: 'Degraded — usable with care', icon: '▲', tone: 'warn' },
  'out of service': { label: 'Out of service', icon: '■', tone: 'stop' },
};

/** What an admin sets on a machine (Admin › Machines). The code is set once, at creation: it is in the QR label. */
export interface MachineFields {
  name: string;
  /** The machine group whose clearance lets a person run it. */
  groupId: string;
  requiredLevel: ClearanceLevel;
  powerW: number;
  tubeType: TubeType;
  wavelengthUm: number;
  bedWidthMm: number;
  bedDepthMm: number;
  beamDiameterMm: number;
  divergenceMrad: number;
  lensFocalMm: number;
  coolantType: 'water' | 'air';
  /** The chiller range a check-in accepts (°C); null: the common-practice default. */
  coolantMinC: number | null;
  coolantMaxC: number | null;
}

/** A machine as the server gives it: the fields, its code and status (a machine without a group: nobody can book it yet). */
export interface MachineRecord extends Omit<MachineFields, 'groupId'> {
  id: string;
  code: string;
  status: MachineStatus;
  groupId: string | null;
}
