/** Times as the alerts write them: ISO 8601 in UTC, without a ".000" of whole seconds. */
export function isoSeconds(ms: number): string {
  return new Date(ms).toISOString().replace('.000Z', 'Z');
}
