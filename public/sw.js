/*
 * Beamwarden's service worker: the QR pages a person has opened (/m/...) and the files they use are kept on the
 * phone, so a label scanned in a room with no signal still shows the machine, its status as of when it was
 * last loaded, the hazards and the emergency steps. Pages: network first, the saved copy when offline.
 * Built files (/_astro/, hashed): saved once, served from the cache. Fault reports saved offline (IndexedDB,
 * see src/scripts/fault-queue.ts) are sent on a Background Sync; the pages also send them when back online.
 * Signing out empties the saved pages.
 */
const VERSION = 'v1';
const PAGES = `bw-pages-${VERSION}`;
const FILES = `bw-files-${VERSION}`;
const SHELL = ['/favicon.svg', '/manifest.webmanifest'];

self.addEventListener('install', (event) => {
  event.waitUntil(caches.open(FILES).then((c) => c.addAll(SHELL)).then(() => self.skipWaiting()));
});

self.addEventListener('activate', (event) => {
  event.waitUntil((async () => {
    for (const key of await caches.keys()) if (key.startsWith('bw-') && key !== PAGES && key !== FILES) await caches.delete(key);
    await self.clients.claim();
  })());
});

const isQrPage = (url) => url.origin === self.location.origin && /^\/m\/[a-z0-9][a-z0-9-]{1,31}(\/fault)?$/.test(url.pathname);
const isBuiltFile = (url) => url.origin === self.location.origin && (url.pathname.startsWith('/_astro/') || SHELL.includes(url.pathname));

/** Saves a page and the built files it names (styles, scripts, and the fonts the styles name). */
async function savePage(path, response) {
  const pages = await caches.open(PAGES);
  const html = await response.clone().text();
  await pages.put(path, response);
  const files = await caches.open(FILES);
  // styles and scripts the page names (also inside its inline module scripts), then what those import or name
  const queue = [...html.matchAll(/["'(](\/_astro\/[^"')\s]+)/g)].map((m) => m[1]);
  const seen = new Set();
  while (queue.length) {
    const u = queue.shift();
    if (seen.has(u) || seen.size > 60) continue;
    seen.add(u);
    if (await files.match(u)) continue;
    const res = await fetch(u).catch(() => null);
    if (!res || !res.ok) continue;
    if (u.endsWith('.css') || u.endsWith('.js')) {
      const text = await res.clone().text();
      for (const m of text.matchAll(/url\((\/_astro\/[^)]+)\)/g)) queue.push(m[1]);
      for (const m of text.matchAll(/["']\.\/([\w.-]+\.js)["']/g)) queue.push(`/_astro/${m[1]}`);
      for (const m of text.matchAll(/["'](\/_astro\/[\w.-]+\.js)["']/g)) queue.push(m[1]);
    }
    await files.put(u, res);
  }
}

function offlinePage(title, text) {
  const html = `<!doctype html><html lang="en"><head><meta charset="utf-8"><meta name="viewport" content="width=device-width, initial-scale=1"><title>${title} · Beamwarden</title></head>` +
    `<body style="font-family:system-ui,sans-serif;background:#f7f2e8;color:#262522;padding:1.25rem;max-width:36rem;margin:auto"><h1>${title}</h1><p>${text}</p>` +
    '<p><strong>Fire, smoke that does not clear, or a beam outside the machine?</strong> Press the emergency stop, keep the lid shut, use the CO2 extinguisher only if it is safe, and call for help.</p></body></html>';
  return new Response(html, { status: 503, headers: { 'content-type': 'text/html; charset=utf-8' } });
}

/** Saves a machine page and, the first time, its fault form (so a fault can be reported from it offline). */
async function fetchAndSave(path) {
  const res = await fetch(path, { credentials: 'same-origin' });
  if (res.ok && !res.redirected) await savePage(path, res);
  await saveFormOnce(path);
}

async function saveFormOnce(path) {
  const form = `${path}/fault`;
  if (!path.endsWith('/fault') && !(await caches.match(form, { cacheName: PAGES }))) {
    const f = await fetch(form, { credentials: 'same-origin' });
    if (f.ok && !f.redirected) await savePage(form, f);
  }
}

self.addEventListener('message', (event) => {
  const path = event.data && event.data.cache;
  if (typeof path !== 'string' || !isQrPage(new URL(path, self.location.origin))) return;
  event.waitUntil(fetchAndSave(path).catch(() => null));
});

self.addEventListener('fetch', (event) => {
  const req = event.request;
  const url = new URL(req.url);
  if (url.origin !== self.location.origin) return;
  if (req.method === 'POST' && url.pathname === '/signout') {
    event.respondWith(caches.delete(PAGES).then(() => fetch(req)));
    return;
  }
  if (req.method === 'POST' && req.mode === 'navigate' && isQrPage(url)) {
    // a form posted with no connection (check in, check out, the fault form without its script)
    event.respondWith(fetch(req).catch(() => offlinePage('No connection',
      'This needs the network and was not sent. Checking in and out start and close a paid session, so they cannot wait. Go back, move to where you have signal, and try again. A fault report can be saved on this phone: go back and send it again.')));
    return;
  }
  if (req.method !== 'GET') return;
  if (req.mode === 'navigate' && isQrPage(url)) {
    event.respondWith((async () => {
      try {
        const res = await fetch(req);
        if (res.ok && !res.redirected && !url.search) event.waitUntil(savePage(url.pathname, res.clone()).then(() => saveFormOnce(url.pathname)).catch(() => null));
        return res;
      } catch {
        const saved = await caches.match(url.pathname, { cacheName: PAGES });
        return saved || offlinePage('No connection', 'This machine page has not been opened on this phone before, so there is no saved copy. Move to where you have signal and scan the label again.');
      }
    })());
    return;
  }
  if (isBuiltFile(url)) {
    event.respondWith(caches.match(req, { cacheName: FILES }).then((hit) => hit || fetch(req).then((res) => {
      if (res.ok && url.pathname.startsWith('/_astro/')) {
        const copy = res.clone();
        event.waitUntil(caches.open(FILES).then((c) => c.put(req, copy)));
      }
      return res;
    })));
  }
});

// ---- fault reports saved offline (the same store and order as src/scripts/fault-queue.ts)

function openQueue() {
  return new Promise((resolve, reject) => {
    const req = indexedDB.open('beamwarden', 1);
    req.onupgradeneeded = () => req.result.createObjectStore('fault-queue', { keyPath: 'clientId' });
    req.onsuccess = () => resolve(req.result);
    req.onerror = () => reject(req.error);
  });
}

function queueOp(mode, work) {
  return openQueue().then((db) => new Promise((resolve, reject) => {
    const tx = db.transaction('fault-queue', mode);
    const req = work(tx.objectStore('fault-queue'));
    tx.oncomplete = () => { db.close(); resolve(req.result); };
    tx.onerror = () => { db.close(); reject(tx.error); };
  }));
}

async function sendQueued() {
  const rank = { stop: 0, degraded: 1, note: 2 };
  const list = (await queueOp('readonly', (s) => s.getAll())).sort((a, b) => rank[a.severity] - rank[b.severity] || a.savedAt - b.savedAt);
  for (const r of list) {
    const form = new FormData();
    form.set('summary', r.summary);
    form.set('details', r.details);
    form.set('severity', r.severity);
    form.set('clientId', r.clientId);
    r.photos.forEach((p, i) => form.append('photos', p, `photo-${i + 1}.jpg`));
    const res = await fetch(`/api/machines/${encodeURIComponent(r.machineCode)}/faults`, { method: 'POST', body: form, credentials: 'same-origin', headers: { accept: 'application/json' } });
    // signed out, or the server is struggling: keep it, try again later (a thrown error asks the browser to retry)
    if (res.status === 401 || res.status === 403 || res.status >= 500 || res.status === 429 || res.status === 408) throw new Error(`kept: ${res.status}`);
    await queueOp('readwrite', (s) => s.delete(r.clientId));
  }
}

self.addEventListener('sync', (event) => {
  if (event.tag !== 'send-fault-reports') return;
  event.waitUntil(self.navigator.locks ? self.navigator.locks.request('beamwarden-fault-queue', sendQueued) : sendQueued());
});
