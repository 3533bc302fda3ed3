import { and, asc, eq } from 'drizzle-orm'
import { v7 as uuidv7 } from 'uuid'
import { z } from 'zod'
import { writeTransaction } from '#db/client'
import { cables, planRows, trays } from '#db/schema/index'
import { PlanGenerationError, rangePlan, validatePlan, type SlottedPair } from '#shared/domain/plan'
import {
  idSchema,
  planRowCreateSchema,
  planRowUpdateSchema,
  type PageQuery,
  type PlanRowDraft,
} from '#shared/schemas/index'
import type { AppContext } from '../context'
import { AppError, notFound } from '../errors'
import { csvErrorLine, readCsvRecords } from './csv'
import type { Actor } from '../middleware/auth'
import { recordEvent, recordFieldChanges } from '../repositories/audit'
import { dbOf, recordsOf } from '../repositories/records'
import { loadProjectLimits, recomputeClosureTotals } from '../repositories/splices'
import { getClosure } from './closures'
import { isUuid, withParent } from './context'

const planRecords = recordsOf(planRows)
const now = () => new Date().toISOString()

/** The columns of Lightseam's splice-plan CSV, in order; the first line of the file must name them. */
export const planCsvColumns = ['tray', 'slot', 'cable_a', 'fiber_a', 'cable_b', 'fiber_b'] as const

/** A downloadable starting point for the plan CSV. */
export const planCsvTemplate = `${planCsvColumns.join(',')}\n1,1,HMR-F144-01,1,HMR-F288-02,1\n1,2,HMR-F144-01,2,HMR-F288-02,2\n`

function closureRefs(ctx: AppContext, closure: { id: string; projectId: string }) {
  const db = ctx.database.db
  return {
    cables: db
      .select()
      .from(cables)
      .where(and(eq(cables.projectId, closure.projectId), eq(cables.deleted, false)))
      .all(),
    trays: db
      .select()
      .from(trays)
      .where(and(eq(trays.closureId, closure.id), eq(trays.deleted, false)))
      .all(),
  }
}

function planOf(ctx: AppContext, closureId: string) {
  return planRecords.all(ctx.database.db, eq(planRows.closureId, closureId), asc(planRows.slot))
}

/** Every problem of the plan that would result, reported against the rows the caller sent (`offset` of them in it). */
function assertValid(
  ctx: AppContext,
  closure: { id: string; projectId: string },
  plan: SlottedPair[],
  offset: number,
  rowNumber: (i: number) => number,
) {
  const problems = validatePlan(plan, closureRefs(ctx, closure)).filter((p) => p.index >= offset)
  if (problems.length) {
    throw new AppError(
      'invalid_plan',
      `The plan has ${problems.length} problem${problems.length === 1 ? '' : 's'}; nothing was saved.`,
      400,
      problems.map((p) => ({
        row: rowNumber(p.index - offset),
        field: p.field,
        code: p.code,
        message: p.message,
      })),
    )
  }
}

function recompute(ctx: AppContext, closure: { id: string; projectId: string }): void {
  const limits = loadProjectLimits(ctx.database.sqlite, closure.projectId)
  if (limits) recomputeClosureTotals(ctx.database.sqlite, closure.id, limits)
}

export function listPlan(ctx: AppContext, actor: Actor, closureId: unknown, page: PageQuery) {
  const closure = getClosure(ctx, actor, closureId)
  return planRecords.list(ctx.database.db, eq(planRows.closureId, closure.id), page, asc(planRows.slot))
}

/** Adds one row; the whole resulting plan must validate. */
export function addPlanRow(ctx: AppContext, actor: Actor, closureId: unknown, body: unknown) {
  const closure = getClosure(ctx, actor, closureId)
  const input = planRowCreateSchema.parse(withParent(body, 'closureId', closure.id))
  const existing = planOf(ctx, closure.id)
  assertValid(ctx, closure, [...existing, input], existing.length, () => 1)
  return writeTransaction(ctx.database.sqlite, (seq) => {
    if (planRecords.get(ctx.database.db, input.id)) throw new AppError('conflict', 'That id is taken.', 409)
    const row = planRecords.insert(ctx.database.db, input, seq)
    recordEvent(
      ctx.database.db,
      { userId: actor.id, entity: 'plan_row', entityId: row.id, at: now() },
      'created',
      input,
    )
    recompute(ctx, closure)
    return row
  })
}

const planRowPatchSchema = planRowUpdateSchema

function getPlanRow(ctx: AppContext, actor: Actor, rowId: unknown) {
  if (!isUuid(rowId)) throw notFound('The plan row')
  const row = planRecords.get(ctx.database.db, rowId)
  if (!row) throw notFound('The plan row')
  const closure = getClosure(ctx, actor, row.closureId)
  return { row, closure }
}

export function updatePlanRow(ctx: AppContext, actor: Actor, rowId: unknown, body: unknown) {
  const { row, closure } = getPlanRow(ctx, actor, rowId)
  const patch = planRowPatchSchema.parse(body)
  if (Object.keys(patch).length === 0)
    throw new AppError('invalid_input', 'Give at least one field to change.', 400)
  const merged = { ...row, ...patch }
  const others = planOf(ctx, closure.id).filter((r) => r.id !== row.id)
  assertValid(ctx, closure, [...others, merged], others.length, () => 1)
  return writeTransaction(ctx.database.sqlite, (seq) => {
    const after = planRecords.update(ctx.database.db, row.id, patch, seq)
    recordFieldChanges(
      ctx.database.db,
      { userId: actor.id, entity: 'plan_row', entityId: row.id, at: now() },
      row,
      patch,
    )
    recompute(ctx, closure)
    return after
  })
}

export function deletePlanRow(ctx: AppContext, actor: Actor, rowId: unknown): void {
  const { row, closure } = getPlanRow(ctx, actor, rowId)
  writeTransaction(ctx.database.sqlite, (seq) => {
    planRecords.remove(ctx.database.db, row.id, seq)
    recordEvent(
      ctx.database.db,
      { userId: actor.id, entity: 'plan_row', entityId: row.id, at: now() },
      'deleted',
      row,
    )
    recompute(ctx, closure)
  })
}

/** Swaps the closure's plan for `drafts` in one transaction (the old rows become tombstones). */
function replacePlan(
  ctx: AppContext,
  actor: Actor,
  closure: { id: string; projectId: string },
  drafts: PlanRowDraft[],
  source: string,
) {
  return writeTransaction(ctx.database.sqlite, (seq) => {
    const db = dbOf(ctx.database.sqlite)
    const old = planOf(ctx, closure.id)
    for (const row of old) planRecords.remove(db, row.id, seq)
    const rows = drafts.map((draft) =>
      planRecords.insert(db, { ...draft, id: uuidv7(), closureId: closure.id }, seq),
    )
    recordEvent(db, { userId: actor.id, entity: 'closure', entityId: closure.id, at: now() }, 'applied', {
      plan: source,
      removed: old.length,
      added: rows.length,
    })
    recompute(ctx, closure)
    return { replaced: old.length, items: rows }
  })
}

/** Reads a plan CSV (labels and numbers as people write them) and replaces the plan only if every row is valid. */
export function uploadPlanCsv(ctx: AppContext, actor: Actor, closureId: unknown, text: string) {
  const closure = getClosure(ctx, actor, closureId)
  const refs = closureRefs(ctx, closure)
  let records: string[][]
  try {
    records = readCsvRecords(text)
  } catch (error) {
    const message = `The file is not readable CSV: ${(error as Error).message}`
    throw new AppError('invalid_csv', message, 400, [
      { row: csvErrorLine(error), field: 'file', code: 'unreadable', message },
    ])
  }
  const [header, ...body] = records
  const expected = planCsvColumns.join(',')
  if (!header || header.map((h) => h.toLowerCase()).join(',') !== expected) {
    throw new AppError('invalid_csv', `The first line must be the column names: ${expected}`, 400, [
      { row: 1, field: 'header', code: 'bad_header', message: `Expected ${expected}` },
    ])
  }
  if (body.length === 0)
    throw new AppError('invalid_csv', 'The file has no plan rows.', 400, [
      { row: 2, field: 'row', code: 'no_rows', message: 'Add one planned pair per line after the header.' },
    ])
  const cableByLabel = new Map(refs.cables.map((c) => [c.label.toLowerCase(), c]))
  const trayByNumber = new Map(refs.trays.map((t) => [t.number, t]))
  const problems: { row: number; field: string; code: string; message: string }[] = []
  const drafts: (PlanRowDraft & { row: number })[] = []
  body.forEach((cells, i) => {
    const row = i + 2 // spreadsheet numbering: the header is row 1
    if (cells.length !== planCsvColumns.length) {
      problems.push({
        row,
        field: 'row',
        code: 'bad_row',
        message: `Expected ${planCsvColumns.length} cells, found ${cells.length}.`,
      })
      return
    }
    const [trayText, slotText, cableA, fiberAText, cableB, fiberBText] = cells as [
      string,
      string,
      string,
      string,
      string,
      string,
    ]
    const number = (field: string, value: string) => {
      if (!/^\d{1,5}$/.test(value)) {
        problems.push({
          row,
          field,
          code: 'not_a_number',
          message: `"${value.slice(0, 40)}" is not a whole number.`,
        })
        return null
      }
      return Number(value)
    }
    const trayNumber = number('tray', trayText)
    const slot = number('slot', slotText)
    const fiberA = number('fiber_a', fiberAText)
    const fiberB = number('fiber_b', fiberBText)
    const tray = trayNumber === null ? undefined : trayByNumber.get(trayNumber)
    if (trayNumber !== null && !tray)
      problems.push({
        row,
        field: 'tray',
        code: 'unknown_tray',
        message: `The closure has no tray ${trayNumber}.`,
      })
    const a = cableByLabel.get(cableA.toLowerCase())
    const b = cableByLabel.get(cableB.toLowerCase())
    if (!a)
      problems.push({
        row,
        field: 'cable_a',
        code: 'unknown_cable',
        message: `No cable is labelled "${cableA.slice(0, 80)}" in this project.`,
      })
    if (!b)
      problems.push({
        row,
        field: 'cable_b',
        code: 'unknown_cable',
        message: `No cable is labelled "${cableB.slice(0, 80)}" in this project.`,
      })
    if (tray && a && b && slot !== null && fiberA !== null && fiberB !== null) {
      drafts.push({ trayId: tray.id, slot, cableAId: a.id, fiberA, cableBId: b.id, fiberB, row })
    }
  })
  const fieldNames: Record<string, string> = {
    trayId: 'tray',
    slot: 'slot',
    cableAId: 'cable_a',
    fiberA: 'fiber_a',
    cableBId: 'cable_b',
    fiberB: 'fiber_b',
  }
  for (const p of validatePlan(drafts, refs)) {
    problems.push({
      row: drafts[p.index]?.row ?? 0,
      field: fieldNames[p.field] ?? p.field,
      code: p.code,
      message: p.message,
    })
  }
  if (problems.length) {
    problems.sort((x, y) => x.row - y.row)
    throw new AppError(
      'invalid_plan',
      `The plan has ${problems.length} problem${problems.length === 1 ? '' : 's'}; nothing was saved.`,
      400,
      problems,
    )
  }
  return replacePlan(
    ctx,
    actor,
    closure,
    drafts.map(({ row: _row, ...draft }) => draft),
    'csv',
  )
}

export const planGenerateSchema = z
  .object({
    ranges: z
      .array(
        z
          .object({
            cableA: idSchema,
            cableB: idSchema,
            fromA: z.number().int().min(1).max(3456),
            fromB: z.number().int().min(1).max(3456),
            count: z.number().int().min(1).max(3456),
          })
          .strict(),
      )
      .min(1)
      .max(50),
    startTray: z.number().int().min(1).optional(),
    startSlot: z.number().int().min(1).optional(),
  })
  .strict()

/** Generates straight or range mappings into the closure's trays, replacing its plan if the result validates. */
export function generatePlan(ctx: AppContext, actor: Actor, closureId: unknown, body: unknown) {
  const closure = getClosure(ctx, actor, closureId)
  const input = planGenerateSchema.parse(body)
  const refs = closureRefs(ctx, closure)
  let drafts
  try {
    drafts = rangePlan(input.ranges, {
      trays: refs.trays,
      startTray: input.startTray,
      startSlot: input.startSlot,
    })
  } catch (error) {
    if (error instanceof PlanGenerationError) throw new AppError(error.code, error.message, 400)
    throw error
  }
  assertValid(ctx, closure, drafts, 0, (i) => i + 1)
  return replacePlan(ctx, actor, closure, drafts, 'generated')
}
