import { useEffect } from 'react';

/**
 * Calls `settle` with the trimmed text once typing has paused for `ms`, so a search box asks the server once per
 * pause rather than once per key.
 */
export function useSettledText(text: string, settle: (trimmed: string) => void, ms = 250): void {
  useEffect(() => {
    const t = setTimeout(() => settle(text.trim()), ms);
    return () => clearTimeout(t);
    // `settle` is usually an inline function: only a change of the text (or the pause) restarts the wait
  }, [text, ms]);
}
