import { describe, expect, it, vi } from 'vitest'
import { deviceMeta } from '@/idb/db'
import { rejectedList } from '@/idb/reads'
import { addPhotoLink, editSplice, logSplice } from '@/idb/writes'
import { hashBytes } from '@/sync/hash'
import type { LockManagerLike } from '@/sync/lock'
import { ids, testId } from '../shared/builders'
import { freshDb, spliceArgs } from '../idb/support'
import { FakeServer, type FakeRequest } from './fakeServer'
import { pushedSeqs, recordingTimers, rig, seedServer } from './support'

const isPush = (request: FakeRequest) => request.path === '/api/sync/push'

async function logMany(db: Parameters<typeof logSplice>[0], count: number) {
  for (let n = 1; n <= count; n++) await logSplice(db, spliceArgs(n))
}

describe('sync engine: push', () => {
  it('when 250 edits are queued, then they go in seq order in batches of at most 100 and each applies once', async () => {
    const { db, engine, server, pushBodies, statuses } = await rig()
    await logMany(db, 250)

    const result = await engine.syncNow()
    expect(result).toMatchObject({ outcome: 'synced', pushed: 250, error: null })
    const batches = pushedSeqs(pushBodies)
    expect(batches.map((b) => b.length)).toEqual([100, 100, 50])
    expect(batches.flat()).toEqual(Array.from({ length: 250 }, (_, i) => i + 1))
    expect(server.accounted.map((a) => a.seq)).toEqual(Array.from({ length: 250 }, (_, i) => i + 1))
    expect(await db.outbox.count()).toBe(0)
    // Pulled back: the device now holds the server's rows.
    expect((await db.splices.toArray()).every((s) => s.serverSeq > 0)).toBe(true)
    expect(statuses.at(-1)).toMatchObject({ state: 'idle', queued: 0, rejected: 0 })
  })

  it('when mutations are large, then a push body never passes the byte limit', async () => {
    const { db, engine, pushBodies } = await rig({ maxBodyBytes: 20_000 })
    for (let n = 1; n <= 30; n++) await logSplice(db, spliceArgs(n, { notes: 'x'.repeat(1500) }))
    await engine.syncNow()
    expect(pushBodies.length).toBeGreaterThan(2)
    for (const body of pushBodies)
      expect(new TextEncoder().encode(body).byteLength).toBeLessThanOrEqual(20_000)
    expect(pushedSeqs(pushBodies).flat()).toEqual(Array.from({ length: 30 }, (_, i) => i + 1))
  })

  it.each(['hang', 'hang-ignoring-abort', 'drop-request'] as const)(
    'when the push gets no answer (%s), then the outbox stays and the same seqs are resent',
    async (fault) => {
      const { db, engine, server, pushBodies, statuses } = await rig({ requestTimeoutMs: 30 })
      await logMany(db, 3)
      server.failNext(fault, isPush)

      const failed = await engine.syncNow()
      expect(failed.outcome).toBe('failed')
      expect(statuses.at(-1)?.state).toBe('offline')
      const kept = await db.outbox.toArray()
      expect(kept.map((e) => [e.seq, e.state, e.attempts])).toEqual([
        [1, 'sent', 1],
        [2, 'sent', 1],
        [3, 'sent', 1],
      ])

      expect((await engine.syncNow()).outcome).toBe('synced')
      expect(pushedSeqs(pushBodies)).toEqual([
        [1, 2, 3],
        [1, 2, 3],
      ])
      expect(server.accounted.map((a) => a.seq)).toEqual([1, 2, 3])
      expect(await db.outbox.count()).toBe(0)
    },
  )

  it('when the answer is lost after the server applied the batch, then the resend settles as duplicates', async () => {
    const { db, engine, server } = await rig()
    await logMany(db, 2)
    server.failNext('drop-response', isPush)
    await engine.syncNow()
    expect(server.accounted).toHaveLength(2)
    expect(await db.outbox.count()).toBe(2)

    await engine.syncNow()
    expect(server.accounted).toHaveLength(2)
    expect(await db.outbox.count()).toBe(0)
    expect(await db.splices.count()).toBe(2)
  })

  it('when the server refuses a mutation, then it moves to rejected and its local effect is undone', async () => {
    const server = new FakeServer()
    seedServer(server, { state: 'signed_off' })
    const { db, engine, statuses } = await rig({ server })
    const args = spliceArgs(1)
    await logSplice(db, args)

    expect((await engine.syncNow()).outcome).toBe('synced')
    expect(await db.outbox.count()).toBe(0)
    expect(await rejectedList(db)).toMatchObject([{ seq: 1, name: 'createSplice', code: 'closure_locked' }])
    expect(await db.splices.get(args.id)).toBeUndefined()
    expect(statuses.at(-1)).toMatchObject({ state: 'idle', rejected: 1, queued: 0 })
  })

  it('when the server reports a gap, then the engine resends from the seq it expects', async () => {
    const server = new FakeServer()
    seedServer(server)
    let truncated = false
    // A broken proxy drops the first mutation of the first push.
    const fetch = (url: string, init: RequestInit) => {
      if (!truncated && url.endsWith('/api/sync/push')) {
        truncated = true
        const body = JSON.parse(String(init.body))
        body.mutations.shift()
        return server.fetch(url, { ...init, body: JSON.stringify(body) })
      }
      return server.fetch(url, init)
    }
    const warn = vi.spyOn(console, 'warn').mockImplementation(() => undefined)
    const { db, engine, pushBodies } = await rig({ server, fetch })
    await logMany(db, 3)

    expect((await engine.syncNow()).outcome).toBe('synced')
    expect(pushedSeqs(pushBodies)).toEqual([
      [1, 2, 3],
      [1, 2, 3],
    ])
    expect(server.accounted.map((a) => a.seq)).toEqual([1, 2, 3])
    expect(await db.outbox.count()).toBe(0)
    expect(warn).toHaveBeenCalledWith(expect.stringContaining('expects seq 1'))
    warn.mockRestore()
  })

  it('when the server refuses a batch as a whole (403), then nothing is deleted and pull still runs', async () => {
    const { db, engine, server } = await rig()
    await logMany(db, 2)
    server.failNext(
      { status: 403, body: { error: { code: 'client_bound', message: 'Another user.' } } },
      isPush,
    )

    const result = await engine.syncNow()
    expect(result).toMatchObject({ outcome: 'failed', error: expect.stringContaining('client_bound') })
    expect((await db.outbox.toArray()).map((e) => [e.seq, e.state, e.lastError])).toEqual([
      [1, 'pending', expect.stringContaining('client_bound')],
      [2, 'pending', expect.stringContaining('client_bound')],
    ])
    expect(await db.closures.get(ids.closure)).toBeDefined()
    expect(engine.status.state).toBe('error')
  })
})

describe('sync engine: auth and back-off', () => {
  it('when the token has expired, then it refreshes once and the same request succeeds', async () => {
    const { db, engine, server, refreshes, pushBodies } = await rig()
    await logMany(db, 2)
    server.revokeTokens()

    expect((await engine.syncNow()).outcome).toBe('synced')
    expect(refreshes()).toBe(1)
    expect(pushedSeqs(pushBodies)).toEqual([
      [1, 2],
      [1, 2],
    ])
    expect(server.accounted).toHaveLength(2)
  })

  it('when the refresh fails, then the status says sign in, the engine stops and the outbox is untouched', async () => {
    const timers = recordingTimers()
    const { db, engine, server, statuses } = await rig({ refreshAccessToken: async () => null, timers })
    await logMany(db, 2)
    const before = await db.outbox.toArray()
    server.revokeTokens()

    engine.start()
    await vi.waitFor(() => expect(statuses.at(-1)?.state).toBe('needsSignIn'))
    await engine.stop()
    expect(await db.outbox.toArray()).toEqual(before)
    expect(timers.delays).toEqual([])
  })

  it('when the server answers 503 with Retry-After, then nothing is retried before that time', async () => {
    let clock = Date.parse('2025-03-14T12:00:00Z')
    const timers = recordingTimers()
    const { db, engine, server } = await rig({ now: () => clock, timers, pollIntervalMs: 60_000 })
    await logMany(db, 1)
    server.failNext({ status: 503, headers: { 'Retry-After': '120' } }, isPush)

    engine.start()
    await vi.waitFor(() => expect(timers.delays.length).toBeGreaterThan(0))
    expect(timers.delays.at(-1)).toBeGreaterThanOrEqual(120_000)
    const requests = server.requests.length

    expect((await engine.syncNow()).outcome).toBe('deferred')
    expect(server.requests.length).toBe(requests)
    expect(await db.outbox.count()).toBe(1)

    clock += 121_000
    expect((await engine.syncNow()).outcome).toBe('synced')
    expect(await db.outbox.count()).toBe(0)
    await engine.stop()
  })

  it('when rounds keep failing, then retries back off exponentially from 1 s', async () => {
    const timers = recordingTimers()
    const { db, engine, server } = await rig({ timers })
    await logMany(db, 1)
    server.network = () => 'drop-request'
    engine.start()
    await vi.waitFor(() => expect(timers.delays.length).toBe(1))
    await engine.syncNow()
    await engine.syncNow()
    expect(timers.delays).toEqual([750, 1500, 3000])
    await engine.stop()
  })

  it('when the server clock is ahead, then the offset is measured from its Date header', async () => {
    const { db, engine } = await rig({ server: withSeed(new FakeServer(() => Date.now() + 10 * 60_000)) })
    await engine.syncNow()
    expect(Math.abs(engine.status.clockOffsetMs! - 600_000)).toBeLessThan(1500)
    expect((await deviceMeta(db)).clockOffsetMs).toBe(engine.status.clockOffsetMs)
  })
})

function withSeed(server: FakeServer): FakeServer {
  seedServer(server)
  return server
}

describe('sync engine: pull', () => {
  it('when the server holds more than a page, then pull pages until hasMore is false and stores the cursor', async () => {
    const server = withSeed(new FakeServer())
    for (let n = 1; n <= 1100; n++) {
      const { id, ...rest } = spliceArgs((n % 3000) + 1)
      server.seed('splices', {
        ...rest,
        id,
        notes: '',
        isCurrent: true,
        flags: [],
        reviewState: null,
        createdAt: 'x',
      })
    }
    const cursors: number[] = []
    const fetch = (url: string, init: RequestInit) => {
      if (url.includes('/api/sync/pull'))
        cursors.push(Number(new URL(url, 'http://x').searchParams.get('cursor')))
      return server.fetch(url, init)
    }
    const { db, engine } = await rig({ server, fetch })

    expect(await engine.syncNow()).toMatchObject({ outcome: 'synced', pulled: 1103 })
    expect(cursors).toEqual([0, 500, 1000])
    expect((await deviceMeta(db)).cursor).toBe(server.changeSeq)
    expect(await db.splices.count()).toBe(1100)
  })

  it('when a pulled row covers a splice with a pending edit, then the device still shows the edit', async () => {
    const { db, engine, server } = await rig()
    const args = spliceArgs(1, { lossDb: 0.2 })
    await logSplice(db, args)
    await engine.syncNow()
    // The foreman adds a note on the server; the splicer corrects the loss while the push is refused.
    const row = server.rows('splices').get(args.id)!
    server.seed('splices', { ...row, notes: 'seen by foreman' })
    await editSplice(db, args.id, { lossDb: 0.04 })
    server.failNext({ status: 400 }, isPush)

    await engine.syncNow()
    expect(await db.splices.get(args.id)).toMatchObject({ lossDb: 0.04, notes: 'seen by foreman' })
    await engine.syncNow()
    expect(server.rows('splices').get(args.id)).toMatchObject({ lossDb: 0.04, notes: 'seen by foreman' })
  })
})

describe('sync engine: photos', () => {
  it('when the server has a photo, then HEAD skips its upload; a failed upload holds back nothing', async () => {
    const { db, engine, server } = await rig()
    const known = new Uint8Array([0xff, 0xd8, 0xff, 1]).buffer
    const fresh = new Uint8Array([0x89, 0x50, 0x4e, 0x47, 2]).buffer
    server.photos.set(await hashBytes(known), { bytes: new Uint8Array(known), type: 'image/jpeg' })
    const a = await addPhotoLink(
      db,
      { id: testId(800), entity: 'closure', entityId: ids.closure },
      {
        bytes: known,
        type: 'image/jpeg',
        name: 'a.jpg',
      },
    )
    const b = await addPhotoLink(
      db,
      { id: testId(801), entity: 'closure', entityId: ids.closure },
      {
        bytes: fresh,
        type: 'image/png',
        name: 'b.png',
      },
    )
    server.failNext({ status: 500 }, (r) => r.method === 'PUT')

    const first = await engine.syncNow()
    expect(first.outcome).toBe('failed')
    expect(await db.outbox.count()).toBe(0)
    expect(server.accounted).toHaveLength(2)
    expect(server.requests.filter((r) => r.method === 'PUT')).toHaveLength(1)
    expect(await db.photos.get(a.sha256)).toMatchObject({ uploaded: 1 })
    expect(await db.photos.get(b.sha256)).toMatchObject({
      uploaded: 0,
      lastError: expect.stringContaining('500'),
    })

    expect((await engine.syncNow()).outcome).toBe('synced')
    expect(await db.photos.get(b.sha256)).toMatchObject({ uploaded: 1, lastError: null })
    expect(server.photos.get(b.sha256)).toEqual({ bytes: new Uint8Array(fresh), type: 'image/png' })
    expect(server.requests.filter((r) => r.method === 'PUT')).toHaveLength(2)
  })
})

/** A Web Locks stand-in: exclusive, ifAvailable only. */
function fakeLocks(): LockManagerLike {
  const held = new Set<string>()
  return {
    async request(name, _options, callback) {
      if (held.has(name)) return callback(null)
      held.add(name)
      try {
        return await callback({ name })
      } finally {
        held.delete(name)
      }
    },
  }
}

describe('sync engine: one syncing tab', () => {
  it.each([
    ['the in-page mutex', () => null],
    ['Web Locks', fakeLocks],
  ])('when two tabs sync one database at once, then only one pushes (%s)', async (_name, makeLocks) => {
    const locks = makeLocks()
    const server = withSeed(new FakeServer())
    let release!: () => void
    const gate = new Promise<void>((resolve) => (release = resolve))
    server.pushGate = () => gate
    const db = await freshDb()
    const tabA = await rig({ server, db, locks })
    const tabB = await rig({ server, db, locks })
    await logMany(db, 5)

    const a = tabA.engine.syncNow()
    await vi.waitFor(() => expect(server.inFlightPushes).toBe(1))
    const b = await tabB.engine.syncNow()
    expect(b.outcome).toBe('skipped')
    release()
    expect((await a).outcome).toBe('synced')
    expect(server.maxConcurrentPushes).toBe(1)
    expect(server.accounted.map((x) => x.seq)).toEqual([1, 2, 3, 4, 5])
  })
})

describe('sync engine: triggers', () => {
  it('when started, then it syncs at once, after a local write (debounced), when online and when visible', async () => {
    const onlineTarget = new EventTarget()
    const visibilityTarget = Object.assign(new EventTarget(), { visibilityState: 'hidden' })
    const { db, engine, server } = await rig({ onlineTarget, visibilityTarget, writeDebounceMs: 20 })
    engine.start()
    await vi.waitFor(() => expect(server.requests.some((r) => r.path === '/api/sync/pull')).toBe(true))

    await logSplice(db, spliceArgs(1))
    await logSplice(db, spliceArgs(2))
    await vi.waitFor(() => expect(server.accounted).toHaveLength(2))
    expect(server.requests.filter((r) => r.path === '/api/sync/push')).toHaveLength(1)

    server.network = () => 'drop-request'
    await logSplice(db, spliceArgs(3))
    await vi.waitFor(() => expect(engine.status.state).toBe('offline'))
    server.network = null
    onlineTarget.dispatchEvent(new Event('online'))
    await vi.waitFor(() => expect(server.accounted).toHaveLength(3))
    await vi.waitFor(() => expect(engine.status).toMatchObject({ state: 'idle', queued: 0 }))

    const pulls = () => server.requests.filter((r) => r.path === '/api/sync/pull').length
    const before = pulls()
    visibilityTarget.visibilityState = 'visible'
    visibilityTarget.dispatchEvent(new Event('visibilitychange'))
    await vi.waitFor(() => expect(pulls()).toBe(before + 1))
    await engine.stop()
  })
})
