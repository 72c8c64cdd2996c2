/**
 * Knex configuration for the CLI and scripts. The app builds its own pool in src/lib/server/db.ts
 * from the same DATABASE_URL.
 */
import type { Knex } from 'knex';

const config: Knex.Config = {
  client: 'pg',
  connection: process.env.DATABASE_URL ?? 'postgres://beamwarden@127.0.0.1:54329/beamwarden',
  pool: { min: 0, max: 4 },
  migrations: {
    directory: './migrations',
    tableName: 'knex_migrations',
    extension: 'ts',
    loadExtensions: ['.ts'],
  },
  seeds: {
    directory: './seeds',
    extension: 'ts',
    loadExtensions: ['.ts'],
  },
};

export default config;
