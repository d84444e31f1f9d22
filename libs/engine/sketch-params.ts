/**
 * Sketch sizes, chosen by measurement (README "Sketch accuracy and size"; `npm run bench --
 * quartile` prints the design sweep): with them the worst quartile rank error stays under 0.5 % for
 * buckets of 60 to 10,000 readings with up to 12 buckets, and the state stays under 16 KB per sensor.
 */
export const SKETCH = {
  /**
   * Readings the filling bucket buffers before merging them into its centroids (256 rather than
   * 128: half the merges, about 10 % less CPU per reading, measured with process.cpuUsage).
   */
  openCap: 256,
  /**
   * Centroids all closed buckets of one window may keep together (about 5.5 bytes each in the
   * state): each closed bucket keeps at most windowCentroids / buckets, so a 12-bucket window keeps
   * 150 per bucket, and buckets of up to 150 readings are stored exactly.
   */
  windowCentroids: 1800,
  /** Centroids of the merged baseline built at each roll (held in memory only, never stored). */
  baselineBins: 300,
  /**
   * Centroids one closed profile entry (one local hour of one day) keeps: 24 slots x 7 days of
   * them must stay within the 64 KB aim per profiled sensor (README "Time-of-day baselines").
   */
  profileBins: 48,
} as const;

/** Centroids one closed bucket keeps in a window of `buckets` buckets. */
export function closedBins(buckets: number): number {
  return Math.max(1, Math.floor(SKETCH.windowCentroids / buckets));
}

/** Centroids the filling bucket keeps between buffer merges: its closed allowance already. */
export function openBins(buckets: number): number {
  return closedBins(buckets);
}
