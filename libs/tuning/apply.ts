/**
 * Apply a grid point to a config: the point's settings go into `defaults` AND into every
 * `sensors[]` override that sets one of those keys (an override would otherwise shadow the
 * tuned value for its sensors). Other override keys (direction, limits, ...) stay as they are.
 */
import { configToJson, validateConfig, type EngineConfig } from '../config/config.js';
import type { SensorSettings } from '../config/settings.js';
import type { GridPoint } from './grid.js';

/** The config with a grid point's settings applied (validated again). */
export function applyPoint(base: EngineConfig, point: GridPoint): EngineConfig {
  const tuned = point as unknown as Partial<SensorSettings>;
  const keys = Object.keys(point) as (keyof SensorSettings)[];
  const sensors = base.sensors.map((rule) => {
    const overrides: Partial<SensorSettings> = { ...rule.overrides };
    for (const key of keys) if (key in overrides) (overrides as Record<string, unknown>)[key] = tuned[key];
    return { match: rule.match, overrides };
  });
  const cfg: EngineConfig = { defaults: { ...base.defaults, ...tuned }, sensors };
  // Round-trip through validation so a result that replay/run would refuse never leaves here.
  return validateConfig(configToJson(cfg), 'tuned config');
}
