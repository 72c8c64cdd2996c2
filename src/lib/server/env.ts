/**
 * Run-time configuration, read from the process environment and validated once.
 * Development defaults are safe for loopback use only; production must set every secret.
 */
import { z } from 'zod';

const port = z.coerce.number().int().min(1).max(65535);

const schema = z.object({
  NODE_ENV: z.enum(['development', 'production', 'test']).default('production'),
  DATABASE_URL: z
    .string()
    .regex(/^postgres(ql)?:\/\//, 'DATABASE_URL must be a postgres:// connection URL'),
  DATABASE_POOL_MAX: z.coerce.number().int().min(1).max(100).default(10),
  AUTH_SECRET: z.string().min(32, 'AUTH_SECRET must be at least 32 characters (npm start generates one)'),
  PUBLIC_BASE_URL: z.url().default('http://127.0.0.1:4321'),
  SMTP_HOST: z.string().default('127.0.0.1'),
  SMTP_PORT: port.default(1025),
  MAIL_FROM: z.string().default('Beamwarden <beamwarden@tidewater.example>'),
  STRIPE_SECRET_KEY: z.string().regex(/^(sk|rk)_(test|live)_/, 'STRIPE_SECRET_KEY must be a Stripe secret key').default('sk_test_beamwarden_local'),
  STRIPE_API_HOST: z.string().default('127.0.0.1'),
  STRIPE_API_PORT: port.default(12111),
  STRIPE_API_PROTOCOL: z.enum(['http', 'https']).default('http'),
  STRIPE_WEBHOOK_SECRET: z.string().min(8).default('whsec_beamwarden_local_development'),
  S3_ENDPOINT: z.url().default('http://127.0.0.1:4569'),
  S3_REGION: z.string().default('us-east-1'),
  S3_BUCKET: z.string().default('beamwarden-uploads'),
  S3_ACCESS_KEY_ID: z.string().default('S3RVER'),
  S3_SECRET_ACCESS_KEY: z.string().default('S3RVER'),
  /** minutes a password-reset link stays valid */
  RESET_LINK_MINUTES: z.coerce.number().int().min(5).max(24 * 60).default(30),
  /** institution sign-in (OpenID Connect); unset issuer = off */
  OIDC_ISSUER: z.url().optional(),
  OIDC_CLIENT_ID: z.string().min(1).optional(),
  OIDC_CLIENT_SECRET: z.string().min(1).optional(),
  OIDC_EMAIL_CLAIM: z.string().min(1).default('email'),
  /** e-mail domains whose people may sign in this way, separated by commas */
  OIDC_ALLOWED_DOMAINS: z.string().default(''),
});

export type Env = z.infer<typeof schema>;

let cached: Env | undefined;

/** The validated environment. Throws one readable error listing every problem. */
export function env(): Env {
  if (cached) return cached;
  const parsed = schema.safeParse(process.env);
  if (!parsed.success) {
    const lines = parsed.error.issues.map((i) => `  - ${i.path.join('.') || '(root)'}: ${i.message}`);
    throw new Error(`Beamwarden cannot start: the environment is not valid.\n${lines.join('\n')}`);
  }
  cached = parsed.data;
  return cached;
}
