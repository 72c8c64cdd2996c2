/**
 * Stopping and restarting the local mail fake (same command line as scripts/lib/stack.ts startFakes, shared through
 * maildevArgs). Its inbox is read through support/mail.ts.
 */
import { spawn } from 'node:child_process';
import fs from 'node:fs';
import path from 'node:path';
import { alive, maildevArgs, portOpen } from '../../scripts/lib/stack';

function need(name: string): string {
  const v = process.env[name];
  if (!v) throw new Error(`${name} is not set: run the tests through \`npm test\`.`);
  return v;
}

const pidFile = () => path.join(need('TEST_DATA_DIR'), 'run', 'maildev.pid');
const ports = () => ({ smtpPort: Number(need('TEST_SMTP_PORT')), mailWebPort: Number(need('TEST_MAIL_WEB_PORT')) });

/** Stops maildev by the PID the stack recorded, and waits until its SMTP port is closed. */
export async function stopMaildev(): Promise<void> {
  const pid = Number(fs.readFileSync(pidFile(), 'utf8').trim());
  if (!Number.isInteger(pid) || pid <= 1) throw new Error('no maildev PID recorded');
  process.kill(pid, 'SIGTERM');
  const until = Date.now() + 10_000;
  while (alive(pid) || (await portOpen(ports().smtpPort))) {
    if (Date.now() > until) throw new Error('maildev did not stop');
    await new Promise((r) => setTimeout(r, 100));
  }
}

/** Starts maildev again with the same arguments; records its PID where the stack will find and stop it. */
export async function startMaildev(): Promise<void> {
  const dataDir = need('TEST_DATA_DIR');
  const p = ports();
  const log = fs.openSync(path.join(dataDir, 'logs', 'maildev.log'), 'a');
  const child = spawn(process.execPath, maildevArgs({ dataDir, ...p }), { detached: true, stdio: ['ignore', log, log] });
  child.unref();
  fs.writeFileSync(pidFile(), String(child.pid));
  const until = Date.now() + 20_000;
  while (!((await portOpen(p.smtpPort)) && (await portOpen(p.mailWebPort)))) {
    if (Date.now() > until) throw new Error('maildev did not start again');
    await new Promise((r) => setTimeout(r, 150));
  }
}
