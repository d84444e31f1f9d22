/**
 * Sketch sizes, chosen by measurement (see README "Sketch accuracy" and `npm run bench`):
 * they bound memory per sensor while keeping quartile rank error well under 1 %.
 */
export const SKETCH = {
  /** Compression of the filling bucket's TDigest (largest share of mass one centroid may hold). */
  openDelta: 0.05,
  /** The filling bucket is recompressed (deterministically) when it holds more centroids than this. */
  openCap: 200,
  /** Compression applied when a bucket closes. */
  closedDelta: 0.05,
  /** Compression of the merged baseline built from the closed buckets at each roll. */
  baselineDelta: 0.02,
} as const;
