/**
 * Recent readings per sensor for the board's small charts: a fixed-size ring per sensor and a cap
 * on the number of sensors, so memory stays bounded however many sensors stream.
 */
export interface SeriesPoint {
  ts: number;
  value: number;
  flagged: boolean;
}

/**
 * The last `perSensor` readings of each sensor for the card charts, for at most a fixed number of
 * sensors.
 */
export class RecentSeries {
  private readonly rings = new Map<string, { pts: SeriesPoint[]; pos: number }>();

  constructor(
    readonly perSensor = 120,
    readonly maxSensors = 2000,
  ) {}

  /** Appends a point to the sensor's ring, evicting the least recently touched sensor when full. */
  add(sensor: string, point: SeriesPoint): void {
    let ring = this.rings.get(sensor);
    if (ring === undefined) {
      if (this.rings.size >= this.maxSensors) {
        // Evict the sensor touched longest ago (Map keeps insertion order; we re-insert on touch).
        const oldest = this.rings.keys().next().value as string;
        this.rings.delete(oldest);
      }
      ring = { pts: [], pos: 0 };
    } else {
      this.rings.delete(sensor);
    }
    this.rings.set(sensor, ring);
    if (ring.pts.length < this.perSensor) ring.pts.push(point);
    else {
      ring.pts[ring.pos] = point;
      ring.pos = (ring.pos + 1) % this.perSensor;
    }
  }

  /** The sensor's points, oldest first. */
  get(sensor: string): SeriesPoint[] {
    const ring = this.rings.get(sensor);
    if (ring === undefined) return [];
    return ring.pts.length < this.perSensor
      ? [...ring.pts]
      : [...ring.pts.slice(ring.pos), ...ring.pts.slice(0, ring.pos)];
  }

  /** Sensors that have a ring. */
  get sensorCount(): number {
    return this.rings.size;
  }
}
