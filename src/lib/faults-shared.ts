/** Fault vocabulary and input schemas shared by server routes and islands; no I/O. */
import { z } from '@lib/zod';
import { MACHINE_STATUSES } from './machines-shared';

export type { MachineStatus } from './machines-shared';

export const FAULT_SEVERITIES = ['note', 'degraded', 'stop'] as const;
export type FaultSeverity = (typeof FAULT_SEVERITIES)[number];
export const FAULT_STATUSES = ['open', 'triaged', 'resolved'] as const;
export type FaultStatus = (typeof FAULT_STATUSES)[number];

/** What each severity means, in the words the report form and the queue use. */
export const SEVERITY_TEXT: Record<FaultSeverity, { label: string; hint: string; tone: 'ok' | 'warn' | 'stop' }> = {
  note: { label: 'Note', hint: 'Worth knowing, the machine works normally (a worn honeycomb, a missing tool).', tone: 'ok' },
  degraded: { label: 'Degraded', hint: 'Works, but not as it should (weak cuts, a noisy fan, slow air assist). It stays bookable with a warning.', tone: 'warn' },
  stop: { label: 'Stop', hint: 'Unsafe to use (cracked lens or tube, coolant alarm, flames, a failed interlock). It goes out of service at once.', tone: 'stop' },
};

export const faultSeverity = z.enum(FAULT_SEVERITIES, { error: 'Choose note, degraded or stop.' });

export const faultReportFields = z
  .object({
    summary: z.string().trim().min(3, 'Say in a few words what happened.').max(200, 'Use at most 200 characters.'),
    details: z.string().trim().max(4000, 'Use at most 4000 characters.').default(''),
    severity: faultSeverity,
    clientId: z.uuid('The report id is not a UUID.').optional(),
  })
  .strict();

export const faultNoteText = z.string().trim().min(1, 'Write the note.').max(2000, 'Use at most 2000 characters.');

export const triageBody = z
  .object({ severity: faultSeverity.optional(), note: faultNoteText.optional() })
  .strict();

export const returnChecklist = z
  .object({ causeFixed: z.boolean(), interlocksTested: z.boolean(), coolingAndExtraction: z.boolean(), testFire: z.boolean() })
  .partial()
  .strict();

export const resolveBody = z
  .object({
    resolution: z.string().trim().min(3, 'Say what was done.').max(2000, 'Use at most 2000 characters.'),
    /** Resolve and return the machine to service in one step, with the checks confirmed. */
    returnToService: z.object({ checklist: returnChecklist }).strict().optional(),
  })
  .strict();

export const statusBody = z
  .object({
    status: z.enum(MACHINE_STATUSES, { error: 'Choose in service, degraded or out of service.' }),
    reason: z.string().trim().min(3, 'Give the reason (what was checked or done).').max(1000, 'Use at most 1000 characters.'),
    checklist: returnChecklist.optional(),
  })
  .strict();
