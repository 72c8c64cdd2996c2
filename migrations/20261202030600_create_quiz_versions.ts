import type { Knex } from 'knex';

/** Versions of a quiz: a draft is edited; publishing freezes it (a trigger refuses later edits). */
export async function up(knex: Knex): Promise<void> {
  await knex.schema.createTable('quiz_versions', (t) => {
    t.uuid('id').primary().defaultTo(knex.raw('gen_random_uuid()'));
    t.uuid('quiz_id').notNullable().references('quizzes.id');
    t.integer('version').notNullable();
    t.text('status').notNullable().defaultTo('draft');
    t.text('title').notNullable();
    t.integer('pass_mark_pct').notNullable();
    t.integer('questions_per_attempt').notNullable();
    t.integer('attempts_per_day').notNullable().defaultTo(3);
    t.integer('cooldown_minutes').notNullable().defaultTo(10);
    t.jsonb('questions').notNullable();
    t.uuid('edited_by').references('people.id');
    t.timestamp('published_at', { useTz: true });
    t.uuid('published_by').references('people.id');
    t.timestamp('created_at', { useTz: true }).notNullable().defaultTo(knex.fn.now());
    t.timestamp('updated_at', { useTz: true }).notNullable().defaultTo(knex.fn.now());
    t.unique(['quiz_id', 'version']);
  });
  await knex.raw(`
    ALTER TABLE quiz_versions
      ADD CONSTRAINT quiz_versions_status CHECK (status IN ('draft', 'published', 'retired')),
      ADD CONSTRAINT quiz_versions_pass_mark CHECK (pass_mark_pct BETWEEN 1 AND 100),
      ADD CONSTRAINT quiz_versions_draw CHECK (questions_per_attempt >= 1),
      ADD CONSTRAINT quiz_versions_limits CHECK (attempts_per_day BETWEEN 1 AND 50 AND cooldown_minutes BETWEEN 0 AND 10080),
      ADD CONSTRAINT quiz_versions_questions CHECK (jsonb_typeof(questions) = 'array');
    CREATE UNIQUE INDEX quiz_versions_one_draft ON quiz_versions (quiz_id) WHERE status = 'draft';
    CREATE UNIQUE INDEX quiz_versions_one_published ON quiz_versions (quiz_id) WHERE status = 'published';
    CREATE FUNCTION quiz_versions_frozen() RETURNS trigger LANGUAGE plpgsql AS \$\$
    BEGIN
      IF OLD.status <> 'draft' AND (NEW.questions IS DISTINCT FROM OLD.questions OR NEW.pass_mark_pct <> OLD.pass_mark_pct
          OR NEW.questions_per_attempt <> OLD.questions_per_attempt OR NEW.title <> OLD.title) THEN
        RAISE EXCEPTION 'a published quiz version is frozen; edit a new draft' USING ERRCODE = 'check_violation';
      END IF;
      RETURN NEW;
    END \$\$;
    CREATE TRIGGER quiz_versions_frozen BEFORE UPDATE ON quiz_versions FOR EACH ROW EXECUTE FUNCTION quiz_versions_frozen();
  `);
}

export async function down(): Promise<void> {
  throw new Error('Migrations are forward-only: restore a backup instead of rolling back.');
}
