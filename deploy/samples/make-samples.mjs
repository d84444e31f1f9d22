#!/usr/bin/env node
/**
 * Regenerates the invented sample data set of the Lowmarsh pumping station (a made-up site):
 * two days of one-per-minute readings from five sensors, with a few injected faults and a handful
 * of deliberately bad lines, as NDJSON and as its CSV twin. Deterministic (seeded generator), so
 * running it again gives byte-identical files:  node deploy/samples/make-samples.mjs
 *
 * Injected faults (day 2 = 2026-03-03, UTC):
 *   - north-basin/pump-2/bearing-temp: a 4-minute spike to ~72 degC at 10:00
 *   - south-basin/wet-well/level:      stuck at one value for 100 minutes from 04:00
 *   - north-basin/outlet/pressure:     a +45 kPa step from 15:00 to 18:00
 *   - south-basin/pump-3/vibration:    climbs to ~5 mm/s from 20:00, back to normal at 22:30
 *   - north-basin/pump-2/flow:         no fault (a clean control)
 */
import { writeFileSync } from 'node:fs';
import process from 'node:process';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';

const here = dirname(fileURLToPath(import.meta.url));
const START = Date.parse('2026-03-02T00:00:00Z');
const MIN = 60_000;
const MINUTES = 2 * 24 * 60;
const DAY2 = START + 24 * 60 * MIN;

// mulberry32: a small seeded generator, enough for invented data.
function prng(seed) {
  let a = seed >>> 0;
  return () => {
    a = (a + 0x6d2b79f5) >>> 0;
    let t = a;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
}
const rand = prng(20260302);
function gauss() {
  const u = Math.max(rand(), 1e-12);
  return Math.sqrt(-2 * Math.log(u)) * Math.cos(2 * Math.PI * rand());
}
const at = (hh, mm = 0) => DAY2 + (hh * 60 + mm) * MIN;
const daily = (ts) => Math.sin((2 * Math.PI * (ts - START)) / (24 * 60 * MIN));

const SENSORS = [
  {
    id: 'north-basin/pump-2/bearing-temp',
    unit: 'degC',
    digits: 2,
    value: (ts) =>
      ts >= at(10) && ts < at(10, 4) ? 71 + 1.2 * rand() : 46 + 0.6 * daily(ts) + 0.6 * gauss(),
  },
  {
    id: 'north-basin/pump-2/flow',
    unit: 'L/s',
    digits: 1,
    value: (ts) => 118 + 2 * daily(ts) + 2.5 * gauss(),
  },
  {
    id: 'north-basin/outlet/pressure',
    unit: 'kPa',
    digits: 1,
    value: (ts) => 412 + (ts >= at(15) && ts < at(18) ? 45 : 0) + 5 * gauss(),
  },
  {
    id: 'south-basin/pump-3/vibration',
    unit: 'mm/s',
    digits: 2,
    value: (ts) => {
      const base = 2.2 * Math.exp(0.12 * gauss());
      if (ts < at(20) || ts >= at(22, 30)) return base;
      return base + Math.min((ts - at(20)) / (60 * MIN), 1) * 2.8;
    },
  },
  {
    id: 'south-basin/wet-well/level',
    unit: 'm',
    digits: 2,
    // Fills and drains on a 1 h pump cycle; the gauge freezes for 100 minutes on day 2.
    value: (ts) =>
      ts >= at(4) && ts < at(5, 40)
        ? 3.42
        : 3.1 + 0.4 * Math.sin((2 * Math.PI * (ts - START)) / (60 * MIN)) + 0.05 * gauss(),
  },
];

const iso = (ts) => new Date(ts).toISOString().replace('.000Z', 'Z');
const json = [];
const csv = ['ts,sensor,value,unit'];

// Deliberately bad lines, inserted after the given minute: [ndjson text, csv text].
const BAD = new Map([
  [300, ['{"sensor":"north-basin/pump-2/flow","ts":"2026-03-02T05:00:30Z","value":', 'not,a,reading']],
  [420, ['{"ts":"2026-03-02T07:00:30Z","value":3.3}', '2026-03-02T07:00:30Z,,3.3,m']],
  [
    900,
    [
      '{"sensor":"north-basin/outlet/pressure","ts":"2026-03-02T15:00:30Z","value":"n/a"}',
      '2026-03-02T15:00:30Z,north-basin/outlet/pressure,n/a,kPa',
    ],
  ],
  [
    1500,
    [
      '{"sensor":"north-basin/pump-2/flow","ts":"03/03/2026 01:00","value":117.2}',
      '03/03/2026 01:00,north-basin/pump-2/flow,117.2,L/s',
    ],
  ],
  [1501, ['', '']],
  [2000, ['[1772510400000, 2.1]', '2026-03-03T09:20:30Z,"south-basin/pump-3/vibration"']],
  // A reading older than the whole 24 h window before the sensor's newest: the engine refuses it as late.
  [
    2600,
    [
      '{"sensor":"north-basin/pump-2/flow","ts":"2026-03-02T10:00:00Z","value":118.0}',
      '2026-03-02T10:00:00Z,north-basin/pump-2/flow,118.0,L/s',
    ],
  ],
]);

for (let m = 0; m < MINUTES; m++) {
  const ts = START + m * MIN;
  for (const s of SENSORS) {
    const v = Number(s.value(ts).toFixed(s.digits));
    json.push(`{"sensor":"${s.id}","ts":"${iso(ts)}","value":${v}}`);
    csv.push(`${iso(ts)},${s.id},${v},${s.unit}`);
  }
  const bad = BAD.get(m);
  if (bad) {
    json.push(bad[0]);
    csv.push(bad[1]);
  }
}

writeFileSync(join(here, 'pump-station.ndjson'), `${json.join('\n')}\n`);
writeFileSync(join(here, 'pump-station.csv'), `${csv.join('\r\n')}\r\n`);
process.stdout.write(`wrote ${json.length} NDJSON lines and ${csv.length} CSV lines to ${here}\n`);
