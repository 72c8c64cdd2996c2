/**
 * Clearance rules: the states, the transitions between them, validity and lapse in the site's time
 * zone, levels, and the next step a person is told. Pure (no I/O); the server module
 * src/lib/server/clearances/ applies these rules to the database.
 */
import { addDays, startOfZonedDay, zonedDate } from './time';

export const CLEARANCE_STATES = ['quiz due', 'awaiting sign-off', 'cleared', 'lapsed', 'suspended'] as const;
export type ClearanceState = (typeof CLEARANCE_STATES)[number];

export const LEVELS = ['basic', 'advanced'] as const;
export type ClearanceLevel = (typeof LEVELS)[number];

/** What a lapsed clearance needs to be cleared again: a refresher quiz, or the quiz and a new practical sign-off. */
export const REFRESHER_RULES = ['quiz', 'quiz_and_signoff'] as const;
export type RefresherRule = (typeof REFRESHER_RULES)[number];

export const REFRESHER_LABELS: Record<RefresherRule, string> = {
  quiz: 'Refresher quiz only',
  quiz_and_signoff: 'Refresher quiz, then a new practical sign-off',
};

/** How long before expiry a person is warned by e-mail. */
export const LAPSE_WARNING_DAYS = 14;

export type ClearanceEvent =
  | { type: 'quiz_passed' }
  | { type: 'signed_off'; level: ClearanceLevel; heldLevel?: ClearanceLevel }
  | { type: 'expired' }
  | { type: 'suspended' }
  | { type: 'reinstated' };

export interface TransitionContext {
  refresher: RefresherRule;
  /** The state a suspended clearance held before its suspension (where reinstating returns it). */
  suspendedFrom?: Exclude<ClearanceState, 'suspended'> | null;
  /** For reinstating a clearance that was cleared: true when its expiry has passed meanwhile. */
  expired?: boolean;
}

export type TransitionResult = { ok: true; to: ClearanceState } | { ok: false; reason: string };

export function isClearanceState(v: unknown): v is ClearanceState {
  return typeof v === 'string' && (CLEARANCE_STATES as readonly string[]).includes(v);
}

const LEVEL_RANK: Record<ClearanceLevel, number> = { basic: 1, advanced: 2 };

/** True when a clearance held at `held` is enough for a machine asking for `required`. */
export function levelSatisfies(held: ClearanceLevel, required: ClearanceLevel): boolean {
  return LEVEL_RANK[held] >= LEVEL_RANK[required];
}

/**
 * The one place that says which transition is allowed:
 * quiz due →(quiz passed) awaiting sign-off →(signed off) cleared →(expired) lapsed
 * →(refresher quiz passed) cleared, or awaiting sign-off when the group asks for a new sign-off;
 * any state except suspended →(suspended) suspended →(reinstated) the state it came from.
 * A cleared person may be signed off again at a higher level (e.g. advanced for a rotary axis).
 */
export function transition(from: ClearanceState, event: ClearanceEvent, ctx: TransitionContext): TransitionResult {
  switch (event.type) {
    case 'quiz_passed':
      if (from === 'quiz due') return { ok: true, to: 'awaiting sign-off' };
      if (from === 'lapsed') return { ok: true, to: ctx.refresher === 'quiz' ? 'cleared' : 'awaiting sign-off' };
      return { ok: false, reason: refusal(from, 'a quiz pass') };
    case 'signed_off':
      if (from === 'awaiting sign-off') return { ok: true, to: 'cleared' };
      if (from === 'cleared' && event.heldLevel && LEVEL_RANK[event.level] > LEVEL_RANK[event.heldLevel]) return { ok: true, to: 'cleared' };
      if (from === 'cleared') return { ok: false, reason: 'This person is already cleared at this level; a sign-off is only needed for a higher level.' };
      return { ok: false, reason: refusal(from, 'a practical sign-off') };
    case 'expired':
      if (from === 'cleared') return { ok: true, to: 'lapsed' };
      return { ok: false, reason: refusal(from, 'expiry') };
    case 'suspended':
      if (from === 'suspended') return { ok: false, reason: 'This clearance is already suspended.' };
      return { ok: true, to: 'suspended' };
    case 'reinstated': {
      if (from !== 'suspended') return { ok: false, reason: 'Only a suspended clearance can be reinstated.' };
      const back = ctx.suspendedFrom ?? 'quiz due';
      return { ok: true, to: back === 'cleared' && ctx.expired ? 'lapsed' : back };
    }
  }
}

function refusal(from: ClearanceState, what: string): string {
  const why: Record<ClearanceState, string> = {
    'quiz due': 'the quiz has not been passed yet',
    'awaiting sign-off': 'the quiz is already passed and the practical sign-off is next',
    cleared: 'the clearance is already current',
    lapsed: 'the clearance has lapsed and needs the refresher quiz first',
    suspended: 'the clearance is suspended; an instructor must reinstate it first',
  };
  return `Not allowed: ${what} does not apply because ${why[from]}.`;
}

/** The state that holds at `at`: a cleared clearance whose expiry has come is lapsed even before the timed job runs. */
export function effectiveState(stored: ClearanceState, expiresAt: Date | null, at: Date): ClearanceState {
  if (stored === 'cleared' && expiresAt && at.getTime() >= expiresAt.getTime()) return 'lapsed';
  return stored;
}

/** True when a cleared clearance is inside its warning window and has not been warned for this expiry. */
export function needsLapseWarning(state: ClearanceState, expiresAt: Date | null, warnedFor: Date | null, at: Date): boolean {
  if (state !== 'cleared' || !expiresAt) return false;
  if (at.getTime() >= expiresAt.getTime()) return false;
  if (expiresAt.getTime() - at.getTime() > LAPSE_WARNING_DAYS * 86_400_000) return false;
  return !warnedFor || warnedFor.getTime() !== expiresAt.getTime();
}

// ---------------------------------------------------------------------------------------------
// Validity in the site's IANA time zone.

export { addDays };

/**
 * When a clearance given at `clearedAt` lapses: it is valid through the local date `validityDays`
 * after the day of clearance, and lapses at the start (00:00) of the following local day.
 */
export function expiryFor(clearedAt: Date, validityDays: number, timeZone: string): Date {
  return startOfZonedDay(addDays(zonedDate(clearedAt, timeZone), validityDays + 1), timeZone);
}

// ---------------------------------------------------------------------------------------------
// What the person is told.

export interface NextStepContext {
  groupName: string;
  refresher: RefresherRule;
  /** The state a suspended clearance came from. */
  hasQuiz?: boolean;
}

/** One sentence telling a person what to do next for a clearance in `state` (or with none yet). */
export function nextStep(state: ClearanceState | 'none', c: NextStepContext): string {
  const quiz = `Take the ${c.groupName.toLowerCase()} quiz on the Clearances screen`;
  switch (state) {
    case 'none':
    case 'quiz due':
      return c.hasQuiz === false
        ? `No ${c.groupName.toLowerCase()} quiz is published yet; ask an instructor when one will be.`
        : `${quiz}, then book a practical sign-off with an instructor.`;
    case 'awaiting sign-off':
      return 'Your quiz is passed: book a practical sign-off with an instructor — a seat at an induction session, on the Clearances screen.';
    case 'cleared':
      return 'You are cleared: book the machine when you need it.';
    case 'lapsed':
      return c.refresher === 'quiz'
        ? `Your clearance has lapsed. ${quiz.replace('quiz', 'refresher quiz')} to be cleared again.`
        : `Your clearance has lapsed. ${quiz.replace('quiz', 'refresher quiz')}, then book a new practical sign-off with an instructor.`;
    case 'suspended':
      return 'Your clearance is suspended. Ask an instructor or the laser safety officer about reinstating it.';
  }
}

export const STATE_TONE: Record<ClearanceState | 'none', { tone: 'ok' | 'warn' | 'stop' | 'info'; icon: string }> = {
  none: { tone: 'info', icon: '○' },
  'quiz due': { tone: 'info', icon: '○' },
  'awaiting sign-off': { tone: 'warn', icon: '◐' },
  cleared: { tone: 'ok', icon: '✓' },
  lapsed: { tone: 'warn', icon: '⟲' },
  suspended: { tone: 'stop', icon: '⛔' },
};

export type OperateDecision = { ok: true } | { ok: false; state: ClearanceState | 'none'; message: string };

/** The gate: may a person holding this clearance (or none) run a machine asking for `requiredLevel` at `at`? */
export function decideOperate(
  clearance: { state: ClearanceState; level: ClearanceLevel; expiresAt: Date | null } | null,
  machine: { requiredLevel: ClearanceLevel; groupName: string; refresher: RefresherRule; hasQuiz?: boolean },
  at: Date,
): OperateDecision {
  const ctx = { groupName: machine.groupName, refresher: machine.refresher, hasQuiz: machine.hasQuiz };
  if (!clearance) return { ok: false, state: 'none', message: nextStep('none', ctx) };
  const state = effectiveState(clearance.state, clearance.expiresAt, at);
  if (state !== 'cleared') return { ok: false, state, message: nextStep(state, ctx) };
  if (!levelSatisfies(clearance.level, machine.requiredLevel)) {
    return {
      ok: false,
      state,
      message: `This machine needs an ${machine.requiredLevel} ${machine.groupName.toLowerCase()} clearance; you hold ${clearance.level}. Ask an instructor for an ${machine.requiredLevel} practical sign-off.`,
    };
  }
  return { ok: true };
}
