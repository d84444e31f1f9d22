/**
 * Sketch sizes, chosen by measurement (see README "Sketch accuracy" and `npm run bench`):
 * they bound memory per sensor while keeping quartile rank error well under 1 %.
 */
export const SKETCH = {
  /** Compression of the filling bucket's digest (delta = largest share of mass one centroid may hold). */
  openDelta: 0.05,
  /** Readings the filling bucket buffers before merging them into its centroids. */
  openCap: 128,
  /** Compression applied when a bucket closes. */
  closedDelta: 0.05,
  /**
   * Compression of the merged baseline built from the closed buckets at each roll. Measured
   * (test/bench/engine.bench.ts sweep, 1 reading/s, 12 buckets): 0.05 gives a worst quartile rank
   * error over every baseline of about 0.2 %, where 0.02 gave 0.7-1.1 % (finer merging keeps
   * overlapping coarse bucket centroids apart, and interpolating between them misplaces ranks);
   * the best rows of the sweep all have baselineDelta equal to closedDelta.
   */
  baselineDelta: 0.05,
  /**
   * Compression of a closed profile entry (one local hour of one day). Coarser than closedDelta
   * so a 7-day profile of 1 reading/s stays near 60 KB; the profile quartile property test
   * (profile.golden.test.ts) holds the rank error within its 1 % bound.
   */
  profileDelta: 0.1,
} as const;
