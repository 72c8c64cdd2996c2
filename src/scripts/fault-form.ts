/**
 * Progressive enhancement of the fault form (the form works without it): photo previews, photos shrunk on the
 * phone before sending (long side 1600 px, JPEG), sending without leaving the page, and with no connection the
 * report saved on the phone (IndexedDB) to be sent when the connection is back.
 */
import { SYNC_TAG, saveReport, type QueuedReport } from './fault-queue';
import { showQueueNote, startOfflineShell } from './offline-shell';

const MAX_PHOTOS = 3;
const MAX_BYTES = 8 * 1024 * 1024;
const LONG_SIDE = 1600;
export const QUEUED_TEXT = 'Saved on this phone — it will be sent when you are back online.';

async function shrink(file: File): Promise<Blob> {
  try {
    const bitmap = await createImageBitmap(file, { imageOrientation: 'from-image' });
    const scale = Math.min(1, LONG_SIDE / Math.max(bitmap.width, bitmap.height));
    const canvas = document.createElement('canvas');
    canvas.width = Math.round(bitmap.width * scale);
    canvas.height = Math.round(bitmap.height * scale);
    canvas.getContext('2d')?.drawImage(bitmap, 0, 0, canvas.width, canvas.height);
    bitmap.close();
    const blob = await new Promise<Blob | null>((r) => canvas.toBlob(r, 'image/jpeg', 0.82));
    return blob && blob.size < file.size ? blob : file;
  } catch {
    return file; // a format the browser cannot draw (the server still reads it)
  }
}

export function startFaultForm(): void {
  const form = document.querySelector<HTMLFormElement>('form[data-fault-form]');
  if (!form) return;
  void startOfflineShell();
  const code = form.dataset.machineCode ?? '';
  const name = form.dataset.machineName ?? '';
  const input = form.querySelector<HTMLInputElement>('input[data-photos]')!;
  const previews = form.querySelector<HTMLElement>('[data-previews]')!;
  const errorBox = form.querySelector<HTMLElement>('[data-form-error]')!;
  const button = form.querySelector<HTMLButtonElement>('button[type=submit]')!;
  let photos: Blob[] = [];
  const idField = form.querySelector<HTMLInputElement>('input[name=clientId]')!;
  // a page served from the offline copy carries the id of the day it was saved: every report gets its own
  if (crypto.randomUUID) idField.value = crypto.randomUUID();

  const say = (text: string) => {
    errorBox.textContent = text;
    errorBox.classList.toggle('hidden', !text);
    if (text) errorBox.focus();
  };

  input.addEventListener('change', async () => {
    const files = [...(input.files ?? [])];
    previews.replaceChildren();
    photos = [];
    if (files.length > MAX_PHOTOS) return say(`Choose at most ${MAX_PHOTOS} photos.`);
    const big = files.find((f) => f.size > MAX_BYTES);
    if (big) return say(`${big.name} is larger than 8 MB.`);
    say('');
    photos = await Promise.all(files.map(shrink));
    files.forEach((f, i) => {
      const fig = document.createElement('figure');
      fig.className = 'w-24 text-xs';
      const img = document.createElement('img');
      img.src = URL.createObjectURL(photos[i]!);
      img.alt = `Photo ${i + 1}: ${f.name}`;
      img.className = 'h-24 w-24 rounded object-cover';
      const cap = document.createElement('figcaption');
      cap.className = 'truncate';
      cap.textContent = f.name;
      fig.append(img, cap);
      previews.append(fig);
    });
  });

  form.addEventListener('submit', async (e) => {
    e.preventDefault();
    const data = new FormData(form);
    const severity = String(data.get('severity') ?? '') as QueuedReport['severity'];
    const summary = String(data.get('summary') ?? '').trim();
    if (!severity) return say('Choose how serious it is.');
    if (summary.length < 3) return say('Say in a few words what happened.');
    say('');
    const report: QueuedReport = {
      clientId: String(data.get('clientId') || crypto.randomUUID()), machineCode: code, machineName: name, severity, summary,
      details: String(data.get('details') ?? '').trim(), photos: photos.length ? photos : (input.files ? [...input.files] : []), savedAt: Date.now(),
    };
    const queue = async () => {
      await saveReport(report);
      const reg = await navigator.serviceWorker?.getRegistration().catch(() => undefined);
      await (reg as (ServiceWorkerRegistration & { sync?: { register(tag: string): Promise<void> } }) | undefined)?.sync?.register(SYNC_TAG).catch(() => undefined);
      form.reset();
      previews.replaceChildren();
      photos = [];
      idField.value = crypto.randomUUID();
      showQueueNote([QUEUED_TEXT], 'warn');
      document.querySelector<HTMLElement>('[data-queue-note] p')?.setAttribute('data-queued', '');
    };
    button.disabled = true;
    button.textContent = 'Sending…';
    try {
      if (!navigator.onLine) return await queue();
      const body = new FormData();
      for (const k of ['severity', 'summary', 'details', 'clientId'] as const) body.set(k, k === 'summary' ? summary : k === 'details' ? report.details : String(data.get(k) ?? ''));
      report.photos.forEach((p, i) => body.append('photos', p, `photo-${i + 1}.jpg`));
      let res: Response;
      try {
        res = await fetch(`/api/machines/${encodeURIComponent(code)}/faults`, { method: 'POST', body, credentials: 'same-origin', headers: { accept: 'application/json' } });
      } catch {
        return await queue(); // the connection dropped on the way
      }
      const out = (await res.json().catch(() => null)) as { fault?: { id: string }; bumpedBookings?: number; statusBefore?: string; error?: { message?: string; fields?: Record<string, string> } } | null;
      if (!res.ok || !out?.fault) {
        const fields = Object.values(out?.error?.fields ?? {});
        return say([out?.error?.message ?? `The report was not sent (the server answered ${res.status}).`, ...fields].join(' '));
      }
      const q = new URLSearchParams({ reported: out.fault.id, bumped: String(out.bumpedBookings ?? 0), before: out.statusBefore === 'out of service' ? 'out' : 'in' });
      location.assign(`/m/${encodeURIComponent(code)}?${q}`);
    } finally {
      button.disabled = false;
      button.textContent = 'Send the report';
    }
  });
  errorBox.tabIndex = -1;
}
