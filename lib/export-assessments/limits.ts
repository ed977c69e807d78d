/** Size limits of an export assessed in the console (a separate module: the request guard reads it). */

/** Largest upload (bytes): about 100,000 rows of a typical export. */
export const MAX_EXPORT_BYTES = 10 * 1024 * 1024;
/**
 * Most rows assessed in the console (a day at 1 s is 86,400; three days at 5 s 51,840). The
 * assessment runs in the server's process and takes about a second per day at 1 s (npm run
 * bench:assess-speed): longer exports go to `npm run assess`, which takes a week.
 */
export const MAX_EXPORT_ROWS = 100_000;
