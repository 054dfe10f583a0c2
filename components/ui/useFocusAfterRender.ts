'use client';
import { useCallback, useEffect, useRef, useState } from 'react';

/**
 * Keeps a keyboard user's place when an action replaces the control that had the focus (a form that
 * closes, a task that moves on, a button disabled once its work is done): call the returned function
 * in the same handler as the state change, and once React has drawn the result the focus goes to
 * `target()` (a heading or a message with tabIndex -1). `initially`: focus once after the first render.
 */
export function useFocusAfterRender(target: () => HTMLElement | null | undefined, initially = false): () => void {
  const [requests, setRequests] = useState(initially ? 1 : 0);
  const latest = useRef(target);
  useEffect(() => {
    latest.current = target;
  });
  useEffect(() => {
    if (requests > 0) latest.current()?.focus();
  }, [requests]);
  return useCallback(() => setRequests((n) => n + 1), []);
}
