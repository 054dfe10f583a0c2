/**
 * The film on the reading screen: the web rendition, as large as the screen allows, on a dark
 * ground. Deliberately small (film id, image URL, size, calibration only) so the FilmViewer (zoom,
 * pan, measure) can replace it with the same props. Shows nothing about the patient or the case.
 */
export interface ReadingFilmProps {
  filmId: string;
  src: string;
  width: number;
  height: number;
  /** mm per pixel of this image [row, column], or null when the film carries no spacing. */
  calibration: { mmPerPixel: [number, number] | null };
}

export function ReadingFilm({ filmId, src, width, height, calibration }: ReadingFilmProps) {
  const mm = calibration.mmPerPixel;
  return (
    <figure className="overflow-hidden rounded-lg bg-ink-900 p-2" data-film={filmId}>
      {/* eslint-disable-next-line @next/next/no-img-element -- an authorised, uncached route; next/image would proxy and cache it */}
      <img src={src} width={width} height={height} alt="Film to be read" className="mx-auto h-auto max-h-[70vh] w-auto max-w-full" />
      <figcaption className="mt-2 text-center text-xs text-bone-200">
        {width} × {height} px · {mm ? `scale: ${mm[1].toFixed(3)} × ${mm[0].toFixed(3)} mm per pixel` : 'no scale: not calibrated and no pixel spacing in the file'}
      </figcaption>
    </figure>
  );
}
