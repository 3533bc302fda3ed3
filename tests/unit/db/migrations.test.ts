import { existsSync } from 'node:fs'
import { afterEach, describe, expect, it } from 'vitest'
import { currentServerSeq, dbOf, nextServerSeq, openDatabase, rawSqlite, writeTransaction } from '#db/client'
import { runMigrations } from '#db/migrate'
import { addClosure, buildProject, freshDatabase, type TestDatabase, totalsRow } from './support'

let database: TestDatabase | undefined
afterEach(() => {
  database?.close()
  database = undefined
})

describe('migrations and connection settings', () => {
  it('when a fresh file is opened and migrated, then every table, the seed row and the trigger exist', () => {
    database = freshDatabase()
    expect(existsSync(database.file)).toBe(true)
    const names = (type: string) =>
      (
        database!.sqlite
          .prepare('SELECT name FROM sqlite_master WHERE type = ? ORDER BY name')
          .all(type) as Array<{ name: string }>
      ).map((row) => row.name)
    expect(names('table')).toEqual(
      expect.arrayContaining([
        'crews',
        'users',
        'refresh_tokens',
        'projects',
        'cables',
        'closures',
        'closure_assignments',
        'trays',
        'plan_rows',
        'splices',
        'photos',
        'photo_links',
        'notes',
        'audit_log',
        'closure_totals',
        'sync_clients',
        'applied_mutations',
        'rejected_mutations',
        'change_seq',
      ]),
    )
    expect(names('trigger')).toEqual(['closures_totals_row'])
    expect(names('index')).toEqual(
      expect.arrayContaining([
        'splices_closure_current',
        'splices_closure_slot',
        'splices_splicer_time',
        'users_email',
      ]),
    )
    expect(database.sqlite.prepare('SELECT id, value FROM change_seq').all()).toEqual([{ id: 1, value: 0 }])
    expect(database.sqlite.pragma('integrity_check', { simple: true })).toBe('ok')
  })

  it('when migrations run again on a migrated file, then nothing changes and nothing fails', () => {
    database = freshDatabase()
    buildProject(database)
    const before = currentServerSeq(database.sqlite)
    runMigrations(database.db)
    expect(currentServerSeq(database.sqlite)).toBe(before)
    expect(database.sqlite.prepare('SELECT count(*) AS n FROM change_seq').get()).toEqual({ n: 1 })
  })

  it('sets the pragmas the sync protocol relies on', () => {
    database = freshDatabase()
    const { sqlite } = database
    expect(sqlite.pragma('journal_mode', { simple: true })).toBe('wal')
    expect(sqlite.pragma('synchronous', { simple: true })).toBe(2)
    expect(sqlite.pragma('foreign_keys', { simple: true })).toBe(1)
    expect(sqlite.pragma('busy_timeout', { simple: true })).toBe(5000)
  })

  it('when a foreign key is broken, then the write is refused', () => {
    database = freshDatabase()
    expect(() =>
      writeTransaction(database!.sqlite, (seq) =>
        addClosure(database!, { projectId: 'no-such-project', label: 'X' }, seq),
      ),
    ).toThrow(/FOREIGN KEY/)
  })

  it('refuses an e-mail address stored with capitals', () => {
    database = freshDatabase()
    const insert = () =>
      database!.sqlite
        .prepare(
          `INSERT INTO users (id, email, name, role, password_hash, created_at) VALUES ('u1', 'Sam@Example.test', 'Sam', 'office', 'x', '')`,
        )
        .run()
    expect(insert).toThrow(/CHECK/)
  })

  it('when a closure is created, then its totals row exists at once', () => {
    database = freshDatabase()
    const fixture = buildProject(database)
    expect(totalsRow(database, fixture.closureId)).toMatchObject({
      project_id: fixture.projectId,
      planned: 0,
      completion_pct: 0,
    })
  })
})

describe('change sequence', () => {
  it('when write transactions commit, then each gets the next value, in commit order', () => {
    database = freshDatabase()
    const seen = [1, 2, 3].map(() => writeTransaction(database!.sqlite, (seq) => seq))
    expect(seen).toEqual([1, 2, 3])
    expect(currentServerSeq(database.db)).toBe(3)
  })

  it('when a transaction rolls back, then its value is given out again', () => {
    database = freshDatabase()
    writeTransaction(database.sqlite, () => undefined)
    expect(() =>
      writeTransaction(database!.sqlite, () => {
        throw new Error('abandoned')
      }),
    ).toThrow('abandoned')
    expect(writeTransaction(database.sqlite, (seq) => seq)).toBe(2)
  })

  it('works through a Drizzle transaction handle too', () => {
    database = freshDatabase()
    const seq = database.db.transaction((tx) => {
      expect(rawSqlite(tx)).toBe(database!.sqlite)
      expect(dbOf(tx)).toBe(database!.db)
      return nextServerSeq(tx)
    })
    expect(seq).toBe(1)
  })

  it('refuses to hand out a value outside a transaction', () => {
    database = freshDatabase()
    expect(() => nextServerSeq(database!.db)).toThrow(/inside a write transaction/)
  })

  it('when nested, then the inner part is a savepoint with a later value of its own', () => {
    database = freshDatabase()
    const [outer, inner] = writeTransaction(database.sqlite, (seq) => [
      seq,
      writeTransaction(database!.sqlite, (s) => s),
    ])
    expect(inner).toBeGreaterThan(outer as number)
  })
})

describe('openDatabase', () => {
  it('creates the missing parent folders of the file', () => {
    database = freshDatabase()
    const deeper = `${database.file}.d/a/b/c.sqlite`
    const other = openDatabase(deeper)
    expect(existsSync(deeper)).toBe(true)
    other.sqlite.close()
  })
})
