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
  add(sensor: string, p: SeriesPoint): void {
    let r = this.rings.get(sensor);
    if (r === undefined) {
      if (this.rings.size >= this.maxSensors) {
        // Evict the sensor touched longest ago (Map keeps insertion order; we re-insert on touch).
        const oldest = this.rings.keys().next().value as string;
        this.rings.delete(oldest);
      }
      r = { pts: [], pos: 0 };
    } else {
      this.rings.delete(sensor);
    }
    this.rings.set(sensor, r);
    if (r.pts.length < this.perSensor) r.pts.push(p);
    else {
      r.pts[r.pos] = p;
      r.pos = (r.pos + 1) % this.perSensor;
    }
  }

  /** The sensor's points, oldest first. */
  get(sensor: string): SeriesPoint[] {
    const r = this.rings.get(sensor);
    if (r === undefined) return [];
    return r.pts.length < this.perSensor ? [...r.pts] : [...r.pts.slice(r.pos), ...r.pts.slice(0, r.pos)];
  }

  /** Sensors that have a ring. */
  get sensorCount(): number {
    return this.rings.size;
  }
}
