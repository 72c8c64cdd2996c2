/** The headless Chromium the tests drive, and its flags (no sandbox as root, nothing fetched from the network). */
import fs from 'node:fs';

/**
 * CHROMIUM_PATH, else Debian's chromium-headless-shell (installed by scripts/test.sh), else Debian's chromium. The
 * headless shell is Chromium's engine without the desktop browser: a new context and blank page cost ~0.1 s of CPU
 * against ~1.6 s in the full browser's headless mode, and the suite opens hundreds (decision record 0475).
 */
export const CHROMIUM_EXECUTABLE =
  process.env.CHROMIUM_PATH || (fs.existsSync('/usr/lib/chromium/chromium-headless-shell') ? '/usr/lib/chromium/chromium-headless-shell' : '/usr/bin/chromium');

export const CHROMIUM_ARGS = [
  '--no-sandbox',
  '--disable-gpu',
  '--disable-quic',
  '--no-first-run',
  '--disable-background-networking',
  '--disable-component-update',
  '--disable-sync',
];

/** Bytes in /dev/shm, or 0 where there is none. */
function sharedMemoryBytes(): number {
  try {
    const s = fs.statfsSync('/dev/shm');
    return s.blocks * s.bsize;
  } catch {
    return 0;
  }
}

/**
 * Playwright always passes `--disable-dev-shm-usage`, for containers whose /dev/shm holds 64 MB: Chromium then keeps
 * the memory its processes share in files under /tmp, on disk. Where /dev/shm is big enough (this machine: 24 GB of
 * memory-backed tmpfs) the flag only adds disk writes, so it is left out; measured on the accessibility file alone,
 * 55 → 48 s and a fifth less renderer CPU.
 */
export const CHROMIUM_IGNORED_DEFAULTS = sharedMemoryBytes() >= 1024 ** 3 ? ['--disable-dev-shm-usage'] : [];
