/** The drawn test films live with the demo data (lib/demo/drawn-films.ts), which seeds films too. */
export * from '../../lib/demo/drawn-films';
