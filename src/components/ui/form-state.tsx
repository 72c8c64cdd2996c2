/** What the admin forms share: per-field error messages tied to their fields, and an answer that takes the focus. */
import { useId, useRef, useState, type ReactNode } from 'react';

/**
 * A form's per-field error messages: `fieldError(f)` shows one under its field, and `describe(f, hint?)` is the
 * field's aria-describedby (its error, then the id of a hint when there is one), so a screen reader reads both.
 * `id` prefixes the form's other element ids.
 */
export function useFieldErrors<F extends string>() {
  const id = useId();
  const [errors, setErrors] = useState<Partial<Record<F, string>>>({});
  const errorId = (f: F) => `${id}-${f}-error`;
  const describe = (f: F, hint?: string) => [errors[f] ? errorId(f) : '', hint ?? ''].filter(Boolean).join(' ') || undefined;
  const fieldError = (f: F): ReactNode => errors[f] && <span id={errorId(f)} className="text-sm font-normal text-stop">{errors[f]}</span>;
  return { id, errors, setErrors, describe, fieldError };
}

export type Answer = { tone: 'ok' | 'stop'; text: string };

/**
 * The answer beside a form's button: `show` sets it and moves the focus to it (the `answer` element), so keyboard
 * and screen-reader users hear it.
 */
export function useFormAnswer() {
  const [message, setMessage] = useState<Answer | null>(null);
  const answer = useRef<HTMLParagraphElement>(null);
  const show = (m: Answer) => {
    setMessage(m);
    requestAnimationFrame(() => answer.current?.focus());
  };
  return { message, setMessage, show, answer };
}
