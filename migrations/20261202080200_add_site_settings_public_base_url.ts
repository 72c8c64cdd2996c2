import type { Knex } from 'knex';

/**
 * The public address printed on QR labels (e.g. https://laser.tidewater.example). NULL means the
 * PUBLIC_BASE_URL of the environment.
 */
export async function up(knex: Knex): Promise<void> {
  // (no literal question mark below: Knex would read it as a binding placeholder; chr(63) is "?")
  await knex.raw(`
    ALTER TABLE site_settings
      ADD COLUMN public_base_url text
      CONSTRAINT site_settings_public_base_url_shape CHECK (
        public_base_url ~ '^https{0,1}://[^/[:space:]#]+(/[^[:space:]#]*){0,1}$'
        AND strpos(public_base_url, chr(63)) = 0
        AND length(public_base_url) <= 300
      )
  `);
}

export async function down(): Promise<void> {
  throw new Error('Migrations are forward-only: restore a backup instead of rolling back.');
}
