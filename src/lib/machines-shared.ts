/** Machine vocabulary shared by server and client; no I/O. */
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
