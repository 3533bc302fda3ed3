/** The spreadsheet row where csv-parse gave up (its `lines` count), or row 1 when it does not say. */
export function csvErrorLine(error: unknown): number {
  const lines = (error as { lines?: unknown }).lines
  return typeof lines === 'number' && Number.isInteger(lines) && lines >= 1 ? lines : 1
}
