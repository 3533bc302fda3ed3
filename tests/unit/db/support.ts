import { mkdtempSync, rmSync } from 'node:fs'
import { tmpdir } from 'node:os'
import { join } from 'node:path'
import { v7 } from 'uuid'
import { type Database, openDatabase, writeTransaction } from '#db/client'
import { runMigrations } from '#db/migrate'
import { cables, closures, crews, planRows, projects, trays, users } from '#db/schema/index'
import type { ProjectLimits } from '#shared/schemas/project'

export const testLimits: ProjectLimits = {
  estimate: { standardMaxDb: 0.3, contractTargetDb: 0.1 },
  perWavelength: [],
  attemptsBeforeAcceptWithFlag: 3,
}

export interface TestDatabase extends Database {
  file: string
  close: () => void
}

/** A migrated database in a fresh temp folder, removed again by close(). */
export function freshDatabase(): TestDatabase {
  const dir = mkdtempSync(join(tmpdir(), 'lightseam-db-'))
  const file = join(dir, 'nested', 'test.sqlite')
  const database = openDatabase(file)
  runMigrations(database.db)
  return {
    ...database,
    file,
    close: () => {
      database.sqlite.close()
      rmSync(dir, { recursive: true, force: true })
    },
  }
}

export interface ClosureFixture {
  projectId: string
  closureId: string
  crewId: string
  userId: string
  cableA: string
  cableB: string
  trayIds: string[]
}

/** A project with one crew, one splicer, two 24-fiber cables and one closure with the given trays. */
export function buildProject(
  database: Database,
  options: { trays?: number[]; limits?: ProjectLimits; code?: string } = {},
): ClosureFixture {
  return writeTransaction(database.sqlite, (serverSeq) => {
    const { db } = database
    const projectId = v7()
    const crewId = v7()
    const userId = v7()
    const cableA = v7()
    const cableB = v7()
    db.insert(projects)
      .values({
        id: projectId,
        code: options.code ?? `T-${projectId.slice(-6).toUpperCase()}`,
        name: 'Test build',
        limits: options.limits ?? testLimits,
        photoRules: { perSplice: 'none', perTray: false, closedClosure: false },
        otdrToleranceM: 10,
        disagreementDb: 0.15,
        serverSeq,
      })
      .run()
    db.insert(crews).values({ id: crewId, name: 'Test crew', serverSeq }).run()
    db.insert(users)
      .values({
        id: userId,
        email: `splicer-${userId}@example.test`,
        name: 'Test splicer',
        role: 'splicer',
        crewId,
        passwordHash: 'x',
        createdAt: new Date().toISOString(),
        serverSeq,
      })
      .run()
    for (const id of [cableA, cableB]) {
      db.insert(cables)
        .values({
          id,
          projectId,
          label: id === cableA ? 'A-024' : 'B-024',
          fiberCount: 24,
          construction: 'loose_tube',
          fibersPerUnit: 12,
          fiberType: 'G.652.D',
          lengthM: 500,
          serverSeq,
        })
        .run()
    }
    const closureId = addClosure(database, { projectId, crewId, label: 'CL-01' }, serverSeq)
    const trayIds = (options.trays ?? [6, 6]).map((capacity, i) =>
      addTray(database, closureId, i + 1, capacity, serverSeq),
    )
    return { projectId, closureId, crewId, userId, cableA, cableB, trayIds }
  })
}

/** Adds a closure (its totals row comes from the migration's trigger). */
export function addClosure(
  database: Database,
  values: { projectId: string; crewId?: string | null; label: string } & Partial<
    typeof closures.$inferInsert
  >,
  serverSeq: number,
): string {
  const id = values.id ?? v7()
  database.db
    .insert(closures)
    .values({ kind: 'handhole', ...values, id, serverSeq })
    .run()
  return id
}

export function addTray(
  database: Database,
  closureId: string,
  number: number,
  capacity: number,
  serverSeq: number,
): string {
  const id = v7()
  database.db.insert(trays).values({ id, closureId, number, capacity, serverSeq }).run()
  return id
}

export function addPlanRow(
  database: Database,
  row: {
    closureId: string
    trayId: string
    slot: number
    cableAId: string
    fiberA: number
    cableBId: string
    fiberB: number
  },
  serverSeq: number,
): string {
  const id = v7()
  database.db
    .insert(planRows)
    .values({ ...row, id, serverSeq })
    .run()
  return id
}

/** The closure_totals row as stored, with its generated completion. */
export function totalsRow(database: Database, closureId: string): Record<string, unknown> | undefined {
  return database.sqlite.prepare('SELECT * FROM closure_totals WHERE closure_id = ?').get(closureId) as
    Record<string, unknown> | undefined
}
