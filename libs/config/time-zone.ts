/** Validation of the `timeZone` setting. */

/** Whether `zone` is an IANA time zone name this runtime's time zone database knows. */
export function isTimeZone(zone: string): boolean {
  try {
    new Intl.DateTimeFormat('en-US', { timeZone: zone });
    return true;
  } catch {
    return false;
  }
}
