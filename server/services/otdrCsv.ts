import { csvErrorLine, readCsvRecords } from './csv'
import { otdrCsvColumns, otdrCsvRowSchema, type OtdrCsvRow, type OtdrRowProblem } from '#shared/schemas/otdr'

/** A downloadable starting point for the OTDR CSV: one trace from each end of one fiber at 1550 nm. */
export const otdrCsvTemplate = [
  otdrCsvColumns.join(','),
  'TR-864-A Hub to Weir Road,1,A,1550,3151.0,1.420,0.0,0.250,-52.0,connector',
  'TR-864-A Hub to Weir Road,1,A,1550,3151.0,1.420,1240.4,0.041,,splice',
  'TR-864-A Hub to Weir Road,1,A,1550,3151.0,1.420,3151.0,,-14.5,end',
  'TR-864-A Hub to Weir Road,1,B,1550,3151.0,1.410,1910.8,0.035,,splice',
  '',
].join('\n')

export interface CsvRowRead {
  row: number
  value: OtdrCsvRow
}

/** Reads one OTDR CSV file into typed rows, or the problems of its rows (header = row 1). */
export function readOtdrCsv(
  fileName: string,
  text: string,
): { rows: CsvRowRead[]; problems: OtdrRowProblem[] } {
  const problems: OtdrRowProblem[] = []
  let records: string[][]
  try {
    records = readCsvRecords(text)
  } catch (error) {
    return {
      rows: [],
      problems: [
        {
          file: fileName,
          row: csvErrorLine(error),
          field: null,
          message: `The file is not readable CSV: ${(error as Error).message}`,
        },
      ],
    }
  }
  const [header, ...body] = records
  const expected = otdrCsvColumns.join(',')
  if (!header || header.map((h) => h.toLowerCase()).join(',') !== expected) {
    return {
      rows: [],
      problems: [
        {
          file: fileName,
          row: 1,
          field: 'header',
          message: `The first line must be the column names: ${expected}`,
        },
      ],
    }
  }
  if (body.length === 0)
    problems.push({ file: fileName, row: 1, field: null, message: 'The file has no rows after the header.' })
  const rows: CsvRowRead[] = []
  body.forEach((cells, i) => {
    const row = i + 2
    if (cells.length !== otdrCsvColumns.length) {
      problems.push({
        file: fileName,
        row,
        field: null,
        message: `Expected ${otdrCsvColumns.length} cells, found ${cells.length}.`,
      })
      return
    }
    const parsed = otdrCsvRowSchema.safeParse(Object.fromEntries(otdrCsvColumns.map((c, k) => [c, cells[k]])))
    if (!parsed.success) {
      for (const issue of parsed.error.issues)
        problems.push({
          file: fileName,
          row,
          field: issue.path.map(String).join('.') || null,
          message: issue.message,
        })
      return
    }
    rows.push({ row, value: parsed.data })
  })
  return { rows, problems }
}
