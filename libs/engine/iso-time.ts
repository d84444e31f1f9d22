/**
 * ISO-8601 date-times with an explicit zone, read by character codes: no regular expression, no
 * `Date.parse`, no allocation per reading (the replay of ISO input spent about a quarter of its
 * time in the regular-expression path this replaces).
 *
 * Accepted, exactly as before: `YYYY-MM-DD`, then `T`, `t` or one space, `hh:mm`, optional `:ss`
 * with an optional fraction of 1 to 9 digits (milliseconds kept, further digits truncated), then
 * `Z`/`z` or an offset `±hh:mm` / `±hhmm` (hours 0..23, minutes 0..59). `24:00` (with zero seconds
 * and fraction) is the end of the day, i.e. the next midnight. Impossible dates (2026-02-30,
 * month 13, minute 60) are refused.
 */

/** `structure`: not of the shape above; `value`: the right shape but not a real date or time. */
export type IsoFailure = 'structure' | 'value';

const DIGIT_0 = 48;
const MS_PER_MINUTE = 60_000;
const MS_PER_DAY = 86_400_000;

/** Value 0..9 of the digit at `i`, or -1 when it is not an ASCII digit. */
function digitAt(text: string, i: number): number {
  const digit = text.charCodeAt(i) - DIGIT_0;
  return digit >= 0 && digit <= 9 ? digit : -1;
}

/** Two digits at `i` as a number, or -1. */
function twoDigits(text: string, i: number): number {
  const hi = digitAt(text, i);
  const lo = digitAt(text, i + 1);
  return hi < 0 || lo < 0 ? -1 : hi * 10 + lo;
}

/** Days from 1970-01-01 to a proleptic Gregorian date (month 1..12). */
export function daysFromCivil(year: number, month: number, day: number): number {
  // Shift the year to start in March so that the leap day is the last day of the shifted year.
  const y = month <= 2 ? year - 1 : year;
  const era = Math.floor(y / 400);
  const yearOfEra = y - era * 400;
  const shiftedMonth = month > 2 ? month - 3 : month + 9;
  const dayOfYear = Math.floor((153 * shiftedMonth + 2) / 5) + day - 1;
  const dayOfEra = yearOfEra * 365 + Math.floor(yearOfEra / 4) - Math.floor(yearOfEra / 100) + dayOfYear;
  return era * 146_097 + dayOfEra - 719_468;
}

/** Days in a month of the proleptic Gregorian calendar. */
export function daysInMonth(year: number, month: number): number {
  if (month === 2) return year % 4 === 0 && (year % 100 !== 0 || year % 400 === 0) ? 29 : 28;
  return month === 4 || month === 6 || month === 9 || month === 11 ? 30 : 31;
}

/**
 * Epoch milliseconds of an ISO-8601 date-time with zone, or the kind of failure. The string is
 * expected trimmed.
 */
export function parseIsoTime(text: string): number | IsoFailure {
  const n = text.length;
  // Shortest form: YYYY-MM-DDThh:mmZ (17 characters).
  if (n < 17) return 'structure';
  const y0 = digitAt(text, 0);
  const y1 = digitAt(text, 1);
  const y2 = digitAt(text, 2);
  const y3 = digitAt(text, 3);
  if (y0 < 0 || y1 < 0 || y2 < 0 || y3 < 0) return 'structure';
  const month = twoDigits(text, 5);
  const day = twoDigits(text, 8);
  const sep = text.charCodeAt(10);
  const hour = twoDigits(text, 11);
  const minute = twoDigits(text, 14);
  if (
    text.charCodeAt(4) !== 45 || // -
    text.charCodeAt(7) !== 45 ||
    month < 0 ||
    day < 0 ||
    (sep !== 84 && sep !== 116 && sep !== 32) || // T t space
    hour < 0 ||
    text.charCodeAt(13) !== 58 || // :
    minute < 0
  ) {
    return 'structure';
  }
  let i = 16;
  let second = 0;
  let millis = 0;
  let fractionNonZero = false;
  if (text.charCodeAt(i) === 58) {
    second = twoDigits(text, i + 1);
    if (second < 0) return 'structure';
    i += 3;
    if (text.charCodeAt(i) === 46) {
      // Fraction: 1 to 9 digits; the first three are milliseconds, the rest are truncated.
      i++;
      const start = i;
      let scale = 100;
      while (i < n) {
        const digit = digitAt(text, i);
        if (digit < 0) break;
        if (digit !== 0) fractionNonZero = true;
        if (scale >= 1) {
          millis += digit * scale;
          scale /= 10;
        }
        i++;
      }
      const digits = i - start;
      if (digits < 1 || digits > 9) return 'structure';
    }
  }
  // Zone.
  let offsetMinutes = 0;
  const zone = text.charCodeAt(i);
  if (zone === 90 || zone === 122) {
    // Z z
    if (i + 1 !== n) return 'structure';
  } else if (zone === 43 || zone === 45) {
    // + -
    const offHour = twoDigits(text, i + 1);
    if (offHour < 0) return 'structure';
    let j = i + 3;
    if (text.charCodeAt(j) === 58) j++;
    const offMinute = twoDigits(text, j);
    if (offMinute < 0 || j + 2 !== n) return 'structure';
    if (offHour > 23 || offMinute > 59) return 'value';
    offsetMinutes = (zone === 43 ? 1 : -1) * (offHour * 60 + offMinute);
  } else {
    return 'structure';
  }

  const year = y0 * 1000 + y1 * 100 + y2 * 10 + y3;
  if (month < 1 || month > 12 || day < 1 || day > daysInMonth(year, month)) return 'value';
  if (minute > 59 || second > 59) return 'value';
  if (hour > 24 || (hour === 24 && (minute !== 0 || second !== 0 || fractionNonZero))) return 'value';
  return (
    daysFromCivil(year, month, day) * MS_PER_DAY +
    (hour * 60 + minute - offsetMinutes) * MS_PER_MINUTE +
    second * 1000 +
    millis
  );
}

/** True when `s` is a decimal number of milliseconds: optional '-', digits, optional '.digits'. */
export function isEpochText(text: string): boolean {
  const n = text.length;
  let i = text.charCodeAt(0) === 45 ? 1 : 0;
  const intStart = i;
  while (i < n && digitAt(text, i) >= 0) i++;
  if (i === intStart) return false;
  if (i === n) return true;
  if (text.charCodeAt(i) !== 46) return false;
  i++;
  const fracStart = i;
  while (i < n && digitAt(text, i) >= 0) i++;
  return i > fracStart && i === n;
}
