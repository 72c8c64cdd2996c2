/** The machine page's script: the offline shell, and the check-in panel that opens on time without a reload. */
import { startOfflineShell } from './offline-shell';

export function startMachinePage(): void {
  // a saved fault report just went out: show the machine's new status
  void startOfflineShell(() => setTimeout(() => location.reload(), 2500));
  const opens = document.querySelector<HTMLElement>('[data-check-in-opens]');
  const at = opens ? Date.parse(opens.dataset.checkInOpens ?? '') : NaN;
  if (Number.isFinite(at)) {
    const wait = Math.max(0, at - Date.now()) + 1000;
    // timers may sleep with the phone; check again when the page is looked at
    const open = () => {
      if (Date.now() >= at && navigator.onLine) location.reload();
    };
    if (wait < 2 ** 31 - 1) setTimeout(open, wait);
    document.addEventListener('visibilitychange', () => document.visibilityState === 'visible' && open());
  }
}
