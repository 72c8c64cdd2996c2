/**
 * Fault reports saved on the phone while it has no connection (IndexedDB, photos included), and sending them
 * when it is back: stop faults first, oldest first. Each report keeps the id the phone made for it (`clientId`),
 * so a report sent twice (two tabs, the service worker and a page) is stored once on the server.
 * The service worker (public/sw.js) sends the same store on a Background Sync; keep the names in step.
 */
export const DB_NAME = 'beamwarden';
export const STORE = 'fault-queue';
export const SYNC_TAG = 'send-fault-reports';

export interface QueuedReport {
  clientId: string;
  machineCode: string;
  machineName: string;
  severity: 'note' | 'degraded' | 'stop';
  summary: string;
  details: string;
  photos: Blob[];
  savedAt: number;
}

export interface SentReport {
  report: QueuedReport;
  /** 'sent', 'duplicate' (already on the server), or 'refused' (the server will never take it: the message says why). */
  outcome: 'sent' | 'duplicate' | 'refused';
  machineStatus?: string;
  statusBefore?: string;
  message?: string;
}

function openDb(): Promise<IDBDatabase> {
  return new Promise((resolve, reject) => {
    const req = indexedDB.open(DB_NAME, 1);
    req.onupgradeneeded = () => req.result.createObjectStore(STORE, { keyPath: 'clientId' });
    req.onsuccess = () => resolve(req.result);
    req.onerror = () => reject(req.error);
  });
}

async function withStore<T>(mode: IDBTransactionMode, work: (s: IDBObjectStore) => IDBRequest<T>): Promise<T> {
  const db = await openDb();
  try {
    return await new Promise<T>((resolve, reject) => {
      const tx = db.transaction(STORE, mode);
      const req = work(tx.objectStore(STORE));
      tx.oncomplete = () => resolve(req.result);
      tx.onerror = () => reject(tx.error);
      tx.onabort = () => reject(tx.error);
    });
  } finally {
    db.close();
  }
}

export const saveReport = (r: QueuedReport) => withStore('readwrite', (s) => s.put(r)).then(() => undefined);
export const queuedReports = () => withStore<QueuedReport[]>('readonly', (s) => s.getAll() as IDBRequest<QueuedReport[]>);
const dropReport = (clientId: string) => withStore('readwrite', (s) => s.delete(clientId)).then(() => undefined);

/** Stop faults first, then degraded, then notes; oldest first within each. */
export function sendOrder(list: QueuedReport[]): QueuedReport[] {
  const rank = { stop: 0, degraded: 1, note: 2 } as const;
  return [...list].sort((a, b) => rank[a.severity] - rank[b.severity] || a.savedAt - b.savedAt);
}

export function reportForm(r: QueuedReport): FormData {
  const form = new FormData();
  form.set('summary', r.summary);
  form.set('details', r.details);
  form.set('severity', r.severity);
  form.set('clientId', r.clientId);
  r.photos.forEach((p, i) => form.append('photos', p, `photo-${i + 1}.jpg`));
  return form;
}

/**
 * Sends every saved report it can, one at a time, under a lock shared with other tabs and the service worker.
 * Stops at the first network failure (still offline) or when the person is signed out (401), keeping the rest.
 */
export async function sendQueued(): Promise<SentReport[]> {
  const run = async (): Promise<SentReport[]> => {
    const out: SentReport[] = [];
    for (const r of sendOrder(await queuedReports())) {
      let res: Response;
      try {
        res = await fetch(`/api/machines/${encodeURIComponent(r.machineCode)}/faults`, { method: 'POST', body: reportForm(r), credentials: 'same-origin', headers: { accept: 'application/json' } });
      } catch {
        break; // still no connection
      }
      if (res.status === 401 || res.status === 403 || res.status >= 500 || res.status === 429 || res.status === 408) break;
      const data = (await res.json().catch(() => null)) as { machineStatus?: string; statusBefore?: string; error?: { message?: string } } | null;
      await dropReport(r.clientId);
      if (res.ok) out.push({ report: r, outcome: res.status === 200 ? 'duplicate' : 'sent', machineStatus: data?.machineStatus, statusBefore: data?.statusBefore });
      else out.push({ report: r, outcome: 'refused', message: data?.error?.message ?? `The server answered ${res.status}.` });
    }
    return out;
  };
  const locks = (navigator as Navigator & { locks?: LockManager }).locks;
  return locks ? locks.request('beamwarden-fault-queue', run) : run();
}

/** What a person reads after a saved report went out. */
export function sentText(s: SentReport): string {
  const what = `Your saved ${s.report.severity} report on ${s.report.machineName} (“${s.report.summary}”)`;
  if (s.outcome === 'refused') return `${what} was not accepted: ${s.message}`;
  if (s.outcome === 'duplicate') return `${what} had already arrived; it is stored once.`;
  // statusBefore is unknown when the service worker sent it in the background
  if (s.report.severity === 'stop' && s.statusBefore !== undefined) {
    return s.statusBefore === 'out of service'
      ? `${what} is sent. ${s.report.machineName} was already out of service: someone reported a fault before you.`
      : `${what} is sent. ${s.report.machineName} is now out of service for everyone.`;
  }
  return `${what} is sent.`;
}
