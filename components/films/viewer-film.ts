import type { FilmView } from '@/lib/services/films';
import type { ViewerFilm } from './FilmViewer';

/** A film as the viewer takes it: film data only (no patient, no case, no score). */
export function toViewerFilm(f: FilmView, label: string): ViewerFilm {
  return {
    id: f.id,
    label,
    imageUrl: f.urls.web,
    width: f.width,
    height: f.height,
    webWidth: f.webWidth,
    webHeight: f.webHeight,
    pixelSpacingMm: f.pixelSpacingMm,
    calibration: f.calibration,
    measurement: f.measurement ? { diameter: f.measurement.diameter, outline: f.measurement.outline, diameterMm: f.measurement.diameterMm, areaMm2: f.measurement.areaMm2 } : null,
  };
}
