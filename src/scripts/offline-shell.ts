/**
 * The offline part every QR page shares: registers the service worker, caches this page for offline use,
 * shows what needs the network while there is none, and sends fault reports saved on this phone.
 */
import { queuedReports, sendQueued, sentText, type QueuedReport, type SentReport } from './fault-queue';

function setOffline(offline: boolean): void {
  document.querySelectorAll<HTMLElement>('[data-offline-note], [data-offline-only]').forEach((el) => el.classList.toggle('hidden', !offline));
  document.querySelectorAll<HTMLButtonElement>('[data-needs-network] form button[type=submit]').forEach((b) => {
    b.disabled = offline;
  });
}

/** Writes `lines` into the page's queue note (a live region). */
export function showQueueNote(lines: string[], tone: 'ok' | 'warn' = 'ok'): void {
  const box = document.querySelector<HTMLElement>('[data-queue-note]');
  if (!box) return;
  box.replaceChildren(...lines.map((t) => {
    const p = document.createElement('p');
    p.className = `notice notice-${tone}`;
    p.setAttribute('role', 'status');
    p.textContent = t;
    return p;
  }));
}

async function showWaiting(): Promise<void> {
  const waiting = await queuedReports().catch(() => []);
  if (waiting.length) {
    showQueueNote([`${waiting.length} fault report${waiting.length === 1 ? ' is' : 's are'} saved on this phone and will be sent when you are back online.`], 'warn');
  }
}

/** Sends saved reports; `onSent` hears about each one (the machine page reloads to show the new status). */
export async function flush(onSent?: (count: number) => void): Promise<void> {
  if (!navigator.onLine) return;
  const before = await queuedReports().catch((): QueuedReport[] => []);
  const sentHere = await sendQueued().catch((): SentReport[] => []);
  // the service worker's background sync shares the queue (and its lock): what it sent meanwhile is gone from the
  // queue without passing through this page, so the person is told about those too
  const left = new Set((await queuedReports().catch(() => before)).map((r) => r.clientId));
  const handled = new Set(sentHere.map((s) => s.report.clientId));
  const byWorker: SentReport[] = before.filter((r) => !left.has(r.clientId) && !handled.has(r.clientId)).map((report) => ({ report, outcome: 'sent' }));
  const sent = [...sentHere, ...byWorker];
  if (sent.length) {
    showQueueNote(sent.map(sentText), sent.some((s) => s.outcome === 'refused') ? 'warn' : 'ok');
    onSent?.(sent.length);
  }
}

export async function startOfflineShell(onSent?: (count: number) => void): Promise<void> {
  setOffline(!navigator.onLine);
  addEventListener('offline', () => setOffline(true));
  addEventListener('online', () => {
    setOffline(false);
    void flush(onSent);
  });
  if ('serviceWorker' in navigator) {
    try {
      await navigator.serviceWorker.register('/sw.js', { scope: '/' });
      // the first visit is not yet served through the worker: ask it to save this page now
      if (navigator.onLine && !navigator.serviceWorker.controller) {
        void navigator.serviceWorker.ready.then((r) => r.active?.postMessage({ cache: location.pathname }));
      }
    } catch {
      /* no worker (private window, old browser): the page still works online */
    }
  }
  await showWaiting();
  await flush(onSent);
}
