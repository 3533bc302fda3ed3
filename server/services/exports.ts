import ExcelJS from 'exceljs'
import { z } from 'zod'
import { colourName, fiberIdentity, type CableLayout } from '#shared/domain/colour'
import type { AppContext } from '../context'
import { AppError } from '../errors'
import type { Actor } from '../middleware/auth'
import { projectBoard } from '../repositories/board'
import { listSheetSplices, type SheetSplice, type SpliceSheetFilter } from '../repositories/spliceSheet'
import { getClosure } from './closures'
import { getProject } from './projects'

export type Cell = string | number | boolean | null

/** A table ready to be written as CSV or as one XLSX sheet. */
export interface Sheet {
  name: string
  columns: { header: string; width: number }[]
  rows: Cell[][]
}

// A spreadsheet reads a cell starting with one of these as a formula (or a DDE call): a splice note typed as
// "=HYPERLINK(…)" must stay text. OWASP "CSV Injection" advises the leading apostrophe.
const formulaStart = /^[=+\-@\t\r]/

/** Makes a text cell safe to open in a spreadsheet; numbers, booleans and empty cells pass unchanged. */
export function neutralise(cell: Cell): Cell {
  return typeof cell === 'string' && formulaStart.test(cell) ? `'${cell}` : cell
}

function csvField(cell: Cell): string {
  const value = neutralise(cell)
  if (value === null) return ''
  const text = String(value)
  return /[",\r\n]/.test(text) ? `"${text.replace(/"/g, '""')}"` : text
}

/** RFC 4180 CSV with a header row and CRLF line ends, every text cell neutralised. */
export function toCsv(sheet: Sheet): string {
  const lines = [sheet.columns.map((c) => csvField(c.header)), ...sheet.rows.map((row) => row.map(csvField))]
  return lines.map((line) => line.join(',')).join('\r\n') + '\r\n'
}

/** An XLSX workbook with one worksheet per sheet, header row bold and frozen, every text cell neutralised. */
export async function toXlsx(sheets: Sheet[]): Promise<Buffer> {
  const workbook = new ExcelJS.Workbook()
  workbook.creator = 'Lightseam'
  for (const sheet of sheets) {
    const ws = workbook.addWorksheet(sheet.name.slice(0, 31), { views: [{ state: 'frozen', ySplit: 1 }] })
    ws.columns = sheet.columns.map((c) => ({ header: c.header, width: c.width }))
    ws.getRow(1).font = { bold: true }
    for (const row of sheet.rows) ws.addRow(row.map(neutralise))
  }
  return Buffer.from(await workbook.xlsx.writeBuffer())
}

/** A fiber's tube and fiber colour names, e.g. ['Orange', 'Blue/Black']; ribbons are named by number. */
export function fiberColours(layout: CableLayout, fiber: number): { unit: string; fiber: string } {
  try {
    const id = fiberIdentity(layout, fiber)
    const unit = id.ribbon
      ? `Ribbon ${id.ribbon.number}${id.tube ? ` in ${colourName(id.tube.marking)} tube` : ''}`
      : id.tube
        ? colourName(id.tube.marking)
        : ''
    return { unit, fiber: colourName(id.marking) }
  } catch {
    return { unit: '', fiber: '' }
  }
}

const spliceColumns: Sheet['columns'] = [
  { header: 'Closure', width: 24 },
  { header: 'Tray', width: 6 },
  { header: 'Slot', width: 6 },
  { header: 'Cable A', width: 26 },
  { header: 'Fiber A', width: 8 },
  { header: 'Tube/ribbon A', width: 14 },
  { header: 'Fiber colour A', width: 14 },
  { header: 'Cable B', width: 26 },
  { header: 'Fiber B', width: 8 },
  { header: 'Tube/ribbon B', width: 14 },
  { header: 'Fiber colour B', width: 14 },
  { header: 'Method', width: 14 },
  { header: 'Estimated loss (dB)', width: 12 },
  { header: 'Attempt', width: 8 },
  { header: 'Current', width: 8 },
  { header: 'Re-splice reason', width: 16 },
  { header: 'Flags', width: 28 },
  { header: 'Review', width: 10 },
  { header: 'Accepted because', width: 24 },
  { header: 'Splicer', width: 20 },
  { header: 'Spliced at', width: 22 },
  { header: 'Notes', width: 40 },
]

/** Turns splice attempts into the splice sheet: one row per attempt, colours named, flags listed. */
export function spliceSheet(name: string, splices: readonly SheetSplice[]): Sheet {
  return {
    name,
    columns: spliceColumns,
    rows: splices.map((s) => {
      const a = fiberColours(s.cableA.layout, s.fiberA)
      const b = fiberColours(s.cableB.layout, s.fiberB)
      return [
        s.closureLabel,
        s.trayNumber,
        s.slot,
        s.cableA.label,
        s.fiberA,
        a.unit,
        a.fiber,
        s.cableB.label,
        s.fiberB,
        b.unit,
        b.fiber,
        s.method,
        s.lossDb,
        s.attempt,
        s.isCurrent ? 'yes' : 'no',
        s.respliceReason,
        s.flags.join(', '),
        s.reviewState,
        s.acceptReason,
        s.splicerName,
        s.splicedAt,
        s.notes,
      ]
    }),
  }
}

/** Raw SQL narrowing closures `c` to what the actor may read; mirrors access.ts closureScope. */
export function closureScopeSql(actor: Actor): SpliceSheetFilter['scope'] {
  switch (actor.role) {
    case 'office':
      return undefined
    case 'inspector':
      return { sql: "c.state = 'signed_off'", params: [] }
    case 'foreman':
    case 'splicer':
      return actor.crewId ? { sql: 'c.crew_id = ?', params: [actor.crewId] } : { sql: '0', params: [] }
  }
}

export const exportFormatSchema = z.enum(['csv', 'xlsx']).default('csv')
export const closureExportQuerySchema = z.object({ format: exportFormatSchema }).strict()
export const projectExportQuerySchema = z
  .object({ format: exportFormatSchema, day: z.iso.date().optional() })
  .strict()

export interface ExportFile {
  filename: string
  contentType: string
  body: Buffer
}

const safeName = (text: string) => text.replace(/[^A-Za-z0-9._-]+/g, '-').replace(/^-+|-+$/g, '') || 'export'

async function fileOf(sheet: Sheet, base: string, format: 'csv' | 'xlsx'): Promise<ExportFile> {
  if (format === 'csv')
    return {
      filename: `${base}.csv`,
      contentType: 'text/csv; charset=utf-8',
      body: Buffer.from(toCsv(sheet), 'utf8'),
    }
  return {
    filename: `${base}.xlsx`,
    contentType: 'application/vnd.openxmlformats-officedocument.spreadsheetml.sheet',
    body: await toXlsx([sheet]),
  }
}

/** The splices of one closure, every attempt, as CSV or XLSX. */
export async function closureSplicesFile(ctx: AppContext, actor: Actor, closureId: unknown, query: unknown) {
  const closure = getClosure(ctx, actor, closureId)
  const q = closureExportQuerySchema.parse(query)
  const rows = listSheetSplices(ctx.database.sqlite, { closureId: closure.id })
  return fileOf(spliceSheet('Splices', rows), `splices-${safeName(closure.label)}`, q.format)
}

/** The splices of a project, or of one day of it, narrowed to the actor's scope, as CSV or XLSX. */
export async function projectSplicesFile(ctx: AppContext, actor: Actor, projectId: unknown, query: unknown) {
  const project = getProject(ctx, actor, projectId)
  const q = projectExportQuerySchema.parse(query)
  const rows = listSheetSplices(ctx.database.sqlite, {
    projectId: project.id,
    ...(q.day ? { day: q.day } : {}),
    scope: closureScopeSql(actor),
  })
  const base = `splices-${safeName(project.code)}${q.day ? `-${q.day}` : ''}`
  return fileOf(spliceSheet(q.day ? `Splices ${q.day}` : 'Splices', rows), base, q.format)
}

const boardColumns: Sheet['columns'] = [
  { header: 'Closure', width: 26 },
  { header: 'Kind', width: 12 },
  { header: 'State', width: 12 },
  { header: 'Route position (m)', width: 12 },
  { header: 'Planned', width: 9 },
  { header: 'Logged', width: 9 },
  { header: 'Completion (%)', width: 11 },
  { header: 'Off plan', width: 9 },
  { header: 'Total estimated loss (dB)', width: 12 },
  { header: 'Mean estimated loss (dB)', width: 12 },
  { header: 'Max estimated loss (dB)', width: 12 },
  { header: 'Over target', width: 9 },
  { header: 'Over maximum', width: 9 },
  { header: 'Re-splices', width: 9 },
  { header: 'Photos', width: 8 },
  { header: 'Last activity', width: 22 },
  { header: 'Signed off at', width: 22 },
]

const boardPage = 500

/** Every closure of the project the actor may see, with its roll-up, as one XLSX sheet. */
export async function boardFile(ctx: AppContext, actor: Actor, projectId: unknown): Promise<ExportFile> {
  const project = getProject(ctx, actor, projectId)
  const scoped: { state?: 'signed_off'; crewId?: string } = {}
  if (actor.role === 'inspector') scoped.state = 'signed_off'
  if (actor.role === 'foreman' || actor.role === 'splicer')
    scoped.crewId = actor.crewId ?? '00000000-0000-0000-0000-000000000000'
  const rows: Cell[][] = []
  for (let offset = 0; ; offset += boardPage) {
    const page = projectBoard(ctx.database.db, project.id, {
      limit: boardPage,
      offset,
      sort: 'label',
      dir: 'asc',
      ...scoped,
    })
    for (const c of page.items)
      rows.push([
        c.label,
        c.kind,
        c.state,
        c.routePositionM,
        c.planned,
        c.logged,
        c.completionPct,
        c.offPlan,
        c.lossSum,
        c.lossMean,
        c.lossMax,
        c.overTarget,
        c.overMaximum,
        c.resplices,
        c.photos,
        c.lastActivityAt,
        c.signedOffAt,
      ])
    if (offset + boardPage >= page.total) break
  }
  if (rows.length > 100_000) throw new AppError('too_large', 'The board is too large to export at once.', 413)
  return {
    filename: `board-${safeName(project.code)}.xlsx`,
    contentType: 'application/vnd.openxmlformats-officedocument.spreadsheetml.sheet',
    body: await toXlsx([{ name: 'Board', columns: boardColumns, rows }]),
  }
}
