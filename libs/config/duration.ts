/** Durations in config and on the command line: "250ms", "30s", "15m", "24h", "7d" or plain milliseconds. */
const UNIT_MS: Record<string, number> = { ms: 1, s: 1000, m: 60_000, h: 3_600_000, d: 86_400_000 };

/**
 * Milliseconds of a duration (`90m`, `24h`, `7d`, `500ms`, or a bare number of ms); null when it is
 * not one.
 */
export function parseDuration(raw: unknown): number | null {
  if (typeof raw === 'number') return Number.isFinite(raw) && raw >= 0 ? raw : null;
  if (typeof raw !== 'string') return null;
  const match = /^\s*(\d+(?:\.\d+)?)\s*(ms|s|m|h|d)?\s*$/.exec(raw);
  if (!match) return null;
  return Math.round(Number(match[1]) * UNIT_MS[match[2] ?? 'ms']);
}

/** The shortest exact way to write `ms` in the largest unit that divides it (`86400000` → `1d`). */
export function formatDuration(ms: number): string {
  for (const [unit, unitMs] of [
    ['d', 86_400_000],
    ['h', 3_600_000],
    ['m', 60_000],
    ['s', 1000],
  ] as const) {
    if (ms >= unitMs && ms % unitMs === 0) return `${ms / unitMs}${unit}`;
  }
  return `${ms}ms`;
}
