/** Field schemas shared by several routes and forms. Route-specific schemas sit next to their route. */
import { z } from '@lib/zod';
import { PASSWORD_MAX, PASSWORD_MIN } from './password-rules';
import { ROLES } from './roles';
import { isCalendarDate } from './time';
import { LEVELS } from './clearance-rules';
import { TUBE_TYPES } from './machines-shared';
import { TIERS } from './vocabulary';

export const email = z
  .string()
  .trim()
  .toLowerCase()
  .max(254, 'An e-mail address has at most 254 characters.')
  .pipe(z.email('Enter an e-mail address such as name@example.org.'));

export const password = z
  .string()
  .min(PASSWORD_MIN, `Use at least ${PASSWORD_MIN} characters.`)
  .max(PASSWORD_MAX, `Use at most ${PASSWORD_MAX} characters.`);

export const personName = z.string().trim().min(1, 'Enter your name.').max(120, 'Use at most 120 characters.');

export const uuid = z.uuid('Not a valid id.');

export const role = z.enum(ROLES, { error: `A role is one of ${ROLES.join(', ')}.` });

/** An instant with an explicit offset or Z, e.g. 2026-12-02T09:00:00+13:00. */
export const isoInstant = z.iso.datetime({ offset: true, error: 'Use an ISO 8601 date and time with an offset, e.g. 2026-12-02T09:00:00+13:00.' }).transform((s) => new Date(s));

export const page = z.coerce.number().int().min(1).max(100_000).default(1);
export const pageSize = z.coerce.number().int().min(1).max(200).default(25);

export const searchText = z.string().trim().max(200).optional();

/** A calendar date written YYYY-MM-DD (read in the site's time zone by whoever uses it). */
export const calendarDate = z.string().trim().refine(isCalendarDate, 'Use a date written YYYY-MM-DD, e.g. 2026-12-02.');
// Billing
export const tier = z.enum(TIERS, { error: `A tier is one of ${TIERS.join(', ')}.` });
export const costCentre = z.string().trim().regex(/^[A-Za-z0-9][A-Za-z0-9 ._/-]{0,39}$/, 'A cost centre is 1–40 letters, digits, spaces or . _ / -, e.g. DES101.');
export const minor = z.number().int('Use whole minor units (cents).').min(0, 'Use zero or more.').max(100_000_000, 'That amount is too large.');
export const materialsWanted = z.array(z.object({ sku: z.string().trim().min(1).max(40), quantity: z.number().int().min(0).max(1000) }).strict()).max(50);
/** A declared material on a booking (the materials area checks it against the machine's material rules). */
export const materialDeclaration = z
  .object({
    materialId: z.uuid('Not a valid material id.'),
    thicknessMm: z.number().positive('The thickness must be more than 0 mm.').max(100, 'At most 100 mm.'),
    mode: z.enum(['cut', 'engrave', 'score'], { error: 'The mode is cut, engrave or score.' }),
  })
  .strict();

export const bookingNotes = z.string().trim().max(2000, 'Use at most 2000 characters.').default('');

/** Refinement of a body with startsAt and endsAt: the end comes after the start. */
export function endsAfterStart(v: { startsAt: Date; endsAt: Date }): boolean {
  // (zod may run the refinement after a field already failed: only compare real dates)
  return !(v.startsAt instanceof Date && v.endsAt instanceof Date) || v.endsAt > v.startsAt;
}
export const endsAfterStartMessage = { path: ['endsAt'], message: 'The end must be after the start.' };

/**
 * A machine's fields as an admin sets them (POST /api/machines, PATCH /api/machines/:id and the Machines form).
 * The ranges match the database's checks; the code is the one in the QR label and is set once.
 */
/** A machine's code as its QR label and `/m/<code>` carry it. */
export const MACHINE_CODE_RE = /^[a-z0-9][a-z0-9-]{1,31}$/;
export const machineCode = z.string().trim().toLowerCase().regex(MACHINE_CODE_RE, 'A code is 2–32 lower-case letters, digits or dashes, starting with a letter or digit, e.g. laser-d.');
const decimal = (min: number, max: number, unit: string, places: number) =>
  z.number({ error: `A number of ${unit}.` }).gt(min, `More than ${min} ${unit}.`).max(max, `At most ${max} ${unit}.`)
    .refine((v) => Math.abs(Math.round(v * 10 ** places) - v * 10 ** places) < 1e-6, `At most ${places} decimal place(s).`);
const coolantC = z.number({ error: 'A temperature in °C.' }).min(0, 'At least 0 °C.').max(40, 'At most 40 °C.').multipleOf(0.1, 'One decimal place at most.').nullable();
export const machineFields = z
  .object({
    name: z.string().trim().min(1, 'Give the machine a name.').max(80, 'Use at most 80 characters.'),
    groupId: uuid,
    requiredLevel: z.enum(LEVELS, { error: 'The level is basic or advanced.' }),
    powerW: decimal(0, 1000, 'W', 2),
    tubeType: z.enum(TUBE_TYPES, { error: 'The tube is dc_glass or rf_metal.' }),
    wavelengthUm: z.union([z.literal(10.6), z.literal(9.6)], { error: 'A CO2 laser here runs at 10.6 or 9.6 µm.' }),
    bedWidthMm: z.number().int('Whole millimetres.').min(1, 'At least 1 mm.').max(10_000, 'At most 10 000 mm.'),
    bedDepthMm: z.number().int('Whole millimetres.').min(1, 'At least 1 mm.').max(10_000, 'At most 10 000 mm.'),
    beamDiameterMm: decimal(0, 1000, 'mm', 2),
    divergenceMrad: decimal(0, 100, 'mrad', 3),
    lensFocalMm: decimal(0, 10_000, 'mm', 2),
    coolantType: z.enum(['water', 'air'], { error: 'Cooling is water or air.' }),
    coolantMinC: coolantC,
    coolantMaxC: coolantC,
  })
  .strict();
export type MachineFieldsInput = z.infer<typeof machineFields>;
