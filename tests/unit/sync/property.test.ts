import fc from 'fast-check'
import { describe, expect, it } from 'vitest'
import { deviceMeta } from '@/idb/db'
import { editSplice, logSplice } from '@/idb/writes'
import { spliceArgs } from '../idb/support'
import { FakeServer, type NetworkAction } from './fakeServer'
import { rig, seedServer } from './support'

type Fault = 'ok' | 'drop-request' | 'drop-response' | 'duplicate' | 'hang' | 'busy'

type Command =
  | { kind: 'write'; count: number }
  | { kind: 'edit'; pick: number; lossDb: number }
  | { kind: 'sync'; faults: Fault[] }
  | { kind: 'writeDuringSync'; count: number; faults: Fault[] }

const faultArb = fc.constantFrom<Fault>(
  'ok',
  'ok',
  'drop-request',
  'drop-response',
  'duplicate',
  'hang',
  'busy',
)
const commandArb: fc.Arbitrary<Command> = fc.oneof(
  fc.record({ kind: fc.constant('write' as const), count: fc.integer({ min: 1, max: 4 }) }),
  fc.record({
    kind: fc.constant('edit' as const),
    pick: fc.nat(),
    lossDb: fc.integer({ min: 0, max: 500 }).map((n) => n / 1000),
  }),
  fc.record({ kind: fc.constant('sync' as const), faults: fc.array(faultArb, { maxLength: 4 }) }),
  fc.record({
    kind: fc.constant('writeDuringSync' as const),
    count: fc.integer({ min: 1, max: 3 }),
    faults: fc.array(faultArb, { maxLength: 3 }),
  }),
)

function toAction(fault: Fault): NetworkAction | undefined {
  if (fault === 'ok') return undefined
  if (fault === 'busy') return { status: 503, headers: { 'Retry-After': '1' } }
  return fault
}

describe('sync engine under a bad network (property)', () => {
  it('when writes and syncs interleave with random drops, then the server ends with every mutation exactly once', async () => {
    await fc.assert(
      fc.asyncProperty(fc.array(commandArb, { minLength: 1, maxLength: 12 }), async (commands) => {
        let clock = Date.parse('2025-03-14T08:00:00Z')
        const server = new FakeServer(() => clock)
        seedServer(server)
        const { db, engine } = await rig({ server, now: () => clock, requestTimeoutMs: 5 })
        const written: string[] = []
        const write = async (count: number) => {
          await Promise.all(
            Array.from({ length: count }, () => {
              const args = spliceArgs((written.length % 3000) + 1)
              written.push(args.id)
              return logSplice(db, args, { now: () => clock })
            }),
          )
        }
        const withFaults = (faults: Fault[]) => {
          const queue = [...faults]
          server.network = () => toAction(queue.shift() ?? 'ok')
        }

        for (const command of commands) {
          // Time passes between commands, so a Retry-After never blocks the next sync.
          clock += 5_000
          if (command.kind === 'write') await write(command.count)
          if (command.kind === 'edit' && written.length > 0) {
            await editSplice(db, written[command.pick % written.length]!, { lossDb: command.lossDb })
          }
          if (command.kind === 'sync') {
            withFaults(command.faults)
            await engine.syncNow()
          }
          if (command.kind === 'writeDuringSync') {
            withFaults(command.faults)
            const round = engine.syncNow()
            await write(command.count)
            await round
          }
        }

        // Heal the network and sync to quiet.
        server.network = null
        for (let i = 0; i < 5 && (await db.outbox.count()) > 0; i++) {
          clock += 5_000
          await engine.syncNow()
        }
        clock += 5_000
        await engine.syncNow()

        const { nextSeq, clientId } = await deviceMeta(db)
        const seqs = server.accounted.filter((a) => a.clientId === clientId).map((a) => a.seq)
        expect(seqs).toEqual(Array.from({ length: nextSeq - 1 }, (_, i) => i + 1))
        expect(server.accounted.every((a) => a.status === 'applied')).toBe(true)
        expect(await db.outbox.count()).toBe(0)
        expect(new Set(server.rows('splices').keys())).toEqual(new Set(written))
        // The device equals the server.
        for (const row of server.rows('splices').values()) expect(await db.splices.get(row.id)).toEqual(row)
        expect((await deviceMeta(db)).cursor).toBe(server.changeSeq)
      }),
      { numRuns: 40 },
    )
  })
})
