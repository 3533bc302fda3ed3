// The demo's OTDR results: the acceptance shots of TR-864-A's second ribbon (fibers 13–24) through the vault splice
// at VLT-01, taken from the hub (A end) and from the HH-02 end of TR-864-B (B end) at 1310 and 1550 nm. They go
// through the same import service as a file the office uploads, so matching, pairing and flags are the app's own.
import { importOtdrIntoProject } from '../server/services/otdr'
import { rawSqlite, type Conn } from './client'

export const demoOtdrCable = 'TR-864-A Hub to Weir Road'
export const demoOtdrFibers = { first: 13, last: 24 } as const
export const demoOtdrFiles = {
  fromHub: 'TR-864-A ribbon 2 from the hub.csv',
  fromHandhole: 'TR-864-A ribbon 2 from HH-02.csv',
} as const

const header =
  'cable,fiber,from_end,wavelength_nm,fiber_length_m,end_to_end_db,distance_m,loss_db,reflectance_db,kind'
// The vault splice is 1240 m from the hub; TR-864-B runs on 396 m to HH-02 (path 1636 m, see db/seed.ts).
const pathM = 1636
const spliceM = 1240
const bendM = 702

interface Shot {
  ab: number | null
  ba: number | null
}

/**
 * Readings per fiber and wavelength: the splice's true loss split by a small gainer offset (REFERENCE.md §3: the
 * two directions differ, their average is the loss), with the cases the reconciliation screen has to show.
 */
function readings(fiber: number, wavelength: 1310 | 1550, estimateDb: number): Shot | null {
  const tilt = (((fiber * 7) % 5) - 2) * 0.012 * (wavelength === 1310 ? 1 : 0.8)
  const trueLoss = Math.max(0, estimateDb + (wavelength === 1310 ? 0.008 : 0.004))
  if (fiber === 15 && wavelength === 1550) return { ab: 0.21, ba: 0.17 } // over target, and far from the estimate
  if (fiber === 17 && wavelength === 1310) return { ab: -0.05, ba: 0.25 } // a gainer from A; average 0.10 (REFERENCE.md §3)
  if (fiber === 19 && wavelength === 1550) return { ab: round3(trueLoss), ba: null } // the B-end shot missed the event
  if (fiber === 21 && wavelength === 1310) return { ab: -0.03, ba: -0.02 } // both negative: a matching error
  if (fiber === 24 && wavelength === 1310) return null // not shot at 1310 yet
  return { ab: round3(trueLoss + tilt), ba: round3(trueLoss - tilt) }
}

const round3 = (value: number) => Math.round(value * 1000) / 1000
// Typical cabled attenuation of G.652.D (within the ITU-T G.652 limits of REFERENCE.md §2) plus a launch connector.
const endToEnd = (wavelength: 1310 | 1550, splice: number) =>
  round3((wavelength === 1310 ? 0.34 : 0.2) * (pathM / 1000) + Math.max(splice, 0) + 0.25)

/** The two CSV files of the demo shots, built from the vault's logged estimates. */
export function demoOtdrCsv(estimates: Map<number, number>): { name: string; text: string }[] {
  const hub = [header]
  const handhole = [header]
  for (let fiber: number = demoOtdrFibers.first; fiber <= demoOtdrFibers.last; fiber += 1) {
    for (const wavelength of [1310, 1550] as const) {
      const shot = readings(fiber, wavelength, estimates.get(fiber) ?? 0.03)
      if (!shot) continue
      const row = (end: 'A' | 'B', e2e: number, event: string) =>
        `${demoOtdrCable},${fiber},${end},${wavelength},${pathM},${e2e},${event}`
      const e2eAb = endToEnd(wavelength, shot.ab ?? 0)
      const e2eBa = endToEnd(wavelength, shot.ba ?? shot.ab ?? 0)
      hub.push(row('A', e2eAb, '0,0.25,-52,connector'))
      if (fiber === 22 && wavelength === 1550) hub.push(row('A', e2eAb, `${bendM},0.21,,bend`))
      if (shot.ab !== null) hub.push(row('A', e2eAb, `${spliceM + ((fiber % 3) - 1) * 2},${shot.ab},,splice`))
      hub.push(row('A', e2eAb, `${pathM},,-14.2,end`))
      if (fiber === 22 && wavelength === 1550) handhole.push(row('B', e2eBa, `${pathM - bendM},0.2,,bend`))
      if (shot.ba !== null)
        handhole.push(row('B', e2eBa, `${pathM - spliceM + (fiber % 2)},${shot.ba},,splice`))
      handhole.push(row('B', e2eBa, `${pathM},,-14.6,end`))
    }
  }
  return [
    { name: demoOtdrFiles.fromHub, text: `${hub.join('\n')}\n` },
    { name: demoOtdrFiles.fromHandhole, text: `${handhole.join('\n')}\n` },
  ]
}

/** Imports the demo shots into the seeded project as the office user, at the seed's clock and with its ids. */
export function seedDemoOtdr(
  conn: Conn,
  input: { projectId: string; officeUserId: string; at: string; newId: () => string },
): void {
  const sqlite = rawSqlite(conn)
  const project = sqlite
    .prepare('SELECT id, otdr_tolerance_m AS otdrToleranceM FROM projects WHERE id = ?')
    .get(input.projectId) as { id: string; otdrToleranceM: number }
  const estimates = new Map(
    (
      sqlite
        .prepare(
          `SELECT s.fiber_a AS fiber, s.loss_db AS lossDb FROM splices s JOIN cables k ON k.id = s.cable_a_id
            WHERE k.project_id = ? AND k.label = ? AND s.is_current = 1 AND s.deleted = 0 AND s.fiber_a BETWEEN ? AND ?`,
        )
        .all(project.id, demoOtdrCable, demoOtdrFibers.first, demoOtdrFibers.last) as {
        fiber: number
        lossDb: number
      }[]
    ).map((r) => [r.fiber, r.lossDb]),
  )
  importOtdrIntoProject(
    sqlite,
    input.officeUserId,
    project,
    { files: demoOtdrCsv(estimates) },
    { at: input.at, newId: input.newId },
  )
}
