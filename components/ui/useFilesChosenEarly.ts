'use client';
import { useEffect, useRef, type RefObject } from 'react';

/**
 * A file chosen before the page's script has run (a slow connection, a quick hand) stays in the
 * input, but its change event came before React was listening, so nothing would read it and the
 * next step would never show. Once the input is live this hands such files to `onFiles`, once.
 * A file chosen later arrives through the input's own onChange as usual.
 */
export function useFilesChosenEarly(input: RefObject<HTMLInputElement | null>, onFiles: (files: FileList) => void) {
  const latest = useRef(onFiles);
  useEffect(() => {
    latest.current = onFiles;
  });
  useEffect(() => {
    const files = input.current?.files;
    if (files && files.length > 0) latest.current(files);
  }, [input]);
}
