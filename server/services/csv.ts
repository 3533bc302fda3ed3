import { parse as parseCsv } from 'csv-parse/sync'

/**
 * The rows of an uploaded CSV file as text cells: a BOM is dropped, blank lines skipped, rows may differ in
 * length and cells are trimmed. Throws csv-parse's error for text that is not CSV (see csvErrorLine).
 */
export function readCsvRecords(text: string): string[][] {
  return parseCsv(text, {
    bom: true,
    skip_empty_lines: true,
    relax_column_count: true,
    trim: true,
  }) as string[][]
}

/** The spreadsheet row where csv-parse gave up (its `lines` count), or row 1 when it does not say. */
export function csvErrorLine(error: unknown): number {
  const lines = (error as { lines?: unknown }).lines
  return typeof lines === 'number' && Number.isInteger(lines) && lines >= 1 ? lines : 1
}
