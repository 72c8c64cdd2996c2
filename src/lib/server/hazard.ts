/** Hazard sheets of stored machines; the figures come from the pure module src/lib/hazard.ts. */
import { DomainError } from './errors';
import { getMachine, type Machine } from './machines';
import { hazardSheet, HazardInputError, type HazardInput, type HazardSheet } from '@lib/hazard';

/** Runs the pure computation; an out-of-range number becomes a 422 naming the field. */
export function hazardOrThrow(input: HazardInput): HazardSheet {
  try {
    return hazardSheet(input);
  } catch (err) {
    if (err instanceof HazardInputError) throw new DomainError('invalid', 'invalid', err.message, { [err.field]: err.message });
    throw err;
  }
}

export async function machineHazard(machineId: string, exposureS?: number): Promise<{ machine: Machine; sheet: HazardSheet }> {
  const machine = /^[0-9a-f-]{36}$/i.test(machineId) ? await getMachine(machineId) : null;
  if (!machine) throw new DomainError('not_found', 'not_found', 'No machine has that id.');
  const sheet = hazardOrThrow({
    powerW: machine.powerW, wavelengthUm: machine.wavelengthUm, beamDiameterMm: machine.beamDiameterMm,
    divergenceMrad: machine.divergenceMrad, lensFocalMm: machine.lensFocalMm, ...(exposureS !== undefined ? { exposureS } : {}),
  });
  return { machine, sheet };
}

/** The documented response of GET /api/tools/hazard and GET /api/machines/:id/hazard. */
export function hazardResponse(s: HazardSheet) {
  return {
    ...(s.mpeWPerCm2 !== undefined ? { mpeWPerCm2: s.mpeWPerCm2 } : { mpeJPerCm2: s.mpeJPerCm2 }),
    nohdDirectM: s.nohdDirectM,
    nohdFocusedM: s.nohdFocusedM,
    diffuseHazardM: s.diffuseHazardM,
    opticalDensity: s.opticalDensity,
    opticalDensityExact: s.opticalDensityExact,
    odCase: s.odCase,
    laserClass: s.laserClass,
    photonEnergyEv: s.photonEnergyEv,
    sources: s.sources,
  };
}
