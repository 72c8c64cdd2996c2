// TEMPORARY until the clearances module lands: replaced at merge
/**
 * Stand-in for the clearances module (issue 3) with the same exported interface, so the booking gate
 * can call it now. It refuses the demo person who has no clearance yet and allows everyone else.
 */
import type { Knex } from 'knex';
import { db } from './db';

export type OperateVerdict = { ok: true } | { ok: false; state: string; message: string };

export async function canOperate(personId: string, machineId: string, at: Date, trx?: Knex | Knex.Transaction): Promise<OperateVerdict> {
  void machineId;
  void at;
  const row = await (trx ?? db())('people').where({ id: personId }).first('email');
  if (!row) return { ok: false, state: 'quiz due', message: 'Take the safety quiz for this machine first.' };
  if (String(row.email).toLowerCase() === 'newbie@tidewater.example') {
    return { ok: false, state: 'quiz due', message: 'You are not cleared for this machine yet. Next step: take the safety quiz, then ask an instructor for a practical sign-off.' };
  }
  return { ok: true };
}
