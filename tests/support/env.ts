/** What scripts/test.ts passes to the tests: the running app's address and the test database. */
function need(name: string): string {
  const v = process.env[name];
  if (!v) throw new Error(`${name} is not set: run the tests through \`npm test\` (scripts/test.ts), which starts the services.`);
  return v;
}

export const APP_URL = () => need('APP_URL');
export const DATABASE_URL = () => need('DATABASE_URL');
export const DEMO_PASSWORD = 'beamwarden-demo';
export const DEMO = {
  admin: 'admin@tidewater.example',
  instructor: 'instructor@tidewater.example',
  steward: 'steward@tidewater.example',
  member: 'member@tidewater.example',
  newbie: 'newbie@tidewater.example',
  student: 'student@tidewater.example',
} as const;
export type DemoPerson = keyof typeof DEMO;
