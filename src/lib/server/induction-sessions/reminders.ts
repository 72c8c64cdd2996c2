/** Timed work: seat reminders before a session. */
import { transaction } from '@lib/server/db';
import { queueMail } from '@lib/server/mail';
import { placeLabel } from '@lib/induction';
import { formatSessionTime, link, SAFETY, sessionRow } from './records';
import { icsAttachment } from './seats';
import { getSettings } from '@lib/server/settings';

// ---------------------------------------------------------------------------------------------
// Timed work

/** The day-before reminder: one e-mail per booked seat for sessions starting in the next 24 hours. */
export async function remindSeats(now = new Date()): Promise<{ reminded: number }> {
  return transaction(async (trx) => {
    const due = await trx('induction_seats as x').join('induction_sessions as s', 's.id', 'x.session_id')
      .where({ 'x.state': 'booked', 's.state': 'published' }).whereNull('x.reminded_at')
      .where('s.starts_at', '>', now).where('s.starts_at', '<=', new Date(now.getTime() + 24 * 3_600_000))
      .forUpdate('x').skipLocked().select('x.id', 'x.person_id', 'x.session_id');
    const site = await getSettings(trx);
    for (const d of due) {
      const s = await sessionRow(trx, d.session_id);
      const person = await trx('people').where({ id: d.person_id }).first('email', 'name', 'active');
      await trx('induction_seats').where({ id: d.id }).update({ reminded_at: now });
      if (!person?.active) continue;
      await queueMail(trx, person.email, `Tomorrow: ${s.group_name} induction, ${formatSessionTime(s.starts_at, s.ends_at, site)}`, {
        greeting: `Hello ${person.name},`,
        paragraphs: [
          `A reminder of your seat at the ${s.group_name} session: ${formatSessionTime(s.starts_at, s.ends_at, site)}, at ${placeLabel(s.machine_name, s.place)}, with ${s.instructor_name}.`,
          s.bring ? `Bring: ${s.bring}.` : 'Bring a small test piece of an allowed material.',
          'If you cannot come, cancel the seat on your Clearances screen so someone else can have it.',
        ],
        action: { label: 'See your clearances', url: link('/clearances') },
        footnote: SAFETY,
      }, [icsAttachment(s, d.id, site)]);
    }
    return { reminded: due.length };
  });
}
