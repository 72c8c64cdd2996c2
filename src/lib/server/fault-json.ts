/** The JSON shape of a fault in the API (photo keys stay on the server; photos are served by URL). */
import type { Fault } from './faults/records';

export function faultJson(f: Fault) {
  return {
    id: f.id,
    machineId: f.machineId,
    machineName: f.machineName,
    machineCode: f.machineCode,
    machineStatus: f.machineStatus,
    reporterName: f.reporterName,
    severity: f.severity,
    summary: f.summary,
    details: f.details,
    status: f.status,
    photos: f.photos.map((p, i) => ({ url: `/api/faults/${f.id}/photos/${i + 1}`, width: p.width, height: p.height, bytes: p.bytes })),
    resolution: f.resolution,
    resolvedByName: f.resolvedByName,
    createdAt: f.createdAt.toISOString(),
    triagedAt: f.triagedAt?.toISOString() ?? null,
    resolvedAt: f.resolvedAt?.toISOString() ?? null,
    notes: f.notes.map((n) => ({ authorName: n.authorName, body: n.body, at: n.at.toISOString() })),
  };
}
export type FaultJson = ReturnType<typeof faultJson>;
