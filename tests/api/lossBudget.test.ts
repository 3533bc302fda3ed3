import request from 'supertest'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { linkLoss } from '#shared/domain/budget'
import { makeTestApp, type TestApp } from './support/app'

let t: TestApp
let projectId: string
let cableId: string

beforeAll(() => {
  t = makeTestApp()
  projectId = t.database.sqlite.prepare('SELECT id FROM projects').pluck().get() as string
  cableId = t.database.sqlite
    .prepare("SELECT id FROM cables WHERE label = 'TR-864-A Hub to Weir Road'")
    .pluck()
    .get() as string
})
afterAll(() => t.close())

const path = () => `/api/projects/${projectId}/loss-budget`
const stored = () => ({
  row: t.database.sqlite.prepare('SELECT * FROM loss_budget_settings').all(),
  audit: t.database.sqlite
    .prepare("SELECT count(*) FROM audit_log WHERE entity = 'loss_budget'")
    .pluck()
    .get(),
})
const fiberPath = async () =>
  (
    await request(t.app)
      .get(`/api/projects/${projectId}/fiber-path`)
      .query({ cableId, fiber: 1 })
      .set('Authorization', await t.tokenFor('office'))
  ).body as {
    lengthM: number
    connectorPairs: number
    splices: unknown[]
    budgets: { wavelengthNm: number; allowedDb: number }[]
  }

const good = {
  attenuationDbPerKm: null,
  attenuationByWavelength: [{ wavelength: 1310, dbPerKm: 0.35 }],
  spliceLossDb: 0.01,
  connectorPairLossDb: 0.5,
  marginDb: 3,
}

describe('loss budget settings', () => {
  it('when a project sets nothing, then every wavelength uses the defaults and names their sources', async () => {
    const res = await request(t.app)
      .get(path())
      .set('Authorization', await t.tokenFor('office'))
    expect(res.status).toBe(200)
    expect(res.body.settings).toEqual({
      attenuationDbPerKm: null,
      attenuationByWavelength: [],
      spliceLossDb: null,
      connectorPairLossDb: null,
      marginDb: null,
    })
    const at1550 = res.body.effective.find((e: { wavelengthNm: number }) => e.wavelengthNm === 1550)
    // REFERENCE.md §2: splice 0.3 dB (ANSI/TIA-568.3-D 2016, from memory), mated connector pair 0.75 dB
    // (ANSI/TIA-568.3-D 2016), single-mode outside plant 0.5 dB/km at 1310/1550 nm (ANSI/TIA-568.3-D, from memory).
    expect(at1550.spliceLossDb).toEqual({ value: 0.3, source: expect.stringContaining('from memory') })
    expect(at1550.connectorPairLossDb).toEqual({
      value: 0.75,
      source: 'ANSI/TIA-568.3-D (2016), mated connector pair',
    })
    expect(at1550.attenuationDbPerKm).toEqual({
      value: 0.5,
      source: expect.stringContaining('outside plant'),
    })
    expect(at1550.marginDb.value).toBe(0)
  })

  it('when the office sets the allowances, then they are stored, audited and the fiber path budget uses them per wavelength', async () => {
    const before = await fiberPath()
    const res = await request(t.app)
      .put(path())
      .set('Authorization', await t.tokenFor('office'))
      .send(good)
    expect(res.status).toBe(200)
    expect(res.body.settings).toEqual(good)
    const at1310 = res.body.effective.find((e: { wavelengthNm: number }) => e.wavelengthNm === 1310)
    expect(at1310.attenuationDbPerKm).toEqual({ value: 0.35, source: 'Set for this project' })
    const at1550 = res.body.effective.find((e: { wavelengthNm: number }) => e.wavelengthNm === 1550)
    expect(at1550.attenuationDbPerKm.value).toBe(0.5)
    const fields = t.database.sqlite
      .prepare("SELECT field FROM audit_log WHERE entity = 'loss_budget' AND entity_id = ? ORDER BY field")
      .pluck()
      .all(projectId)
    expect(fields).toEqual(['attenuationByWavelength', 'connectorPairLossDb', 'marginDb', 'spliceLossDb'])

    const after = await fiberPath()
    expect(after.lengthM).toBe(before.lengthM)
    // The allowances of REFERENCE.md §5's worked example (0.35 dB/km at 1310 nm, 0.01 dB a splice, 0.5 dB a
    // connector pair, 3.0 dB margin; ITU-T G.652 Appendix I) on this path's own length, splices and connectors.
    const expected1310 = linkLoss({
      lengthKm: after.lengthM / 1000,
      attenuationDbPerKm: 0.35,
      splices: after.splices.length,
      spliceLossDb: 0.01,
      connectorPairs: after.connectorPairs,
      connectorLossDb: 0.5,
      marginDb: 3,
    }).totalDb
    expect(after.budgets.find((b) => b.wavelengthNm === 1310)!.allowedDb).toBeCloseTo(expected1310, 9)
    expect(expected1310).toBeCloseTo(1.636 * 0.35 + 0.01 + 0.5 + 3, 9)
    // 1550 nm keeps the default attenuation (0.5 dB/km) with the project's splice, connector and margin.
    expect(after.budgets.find((b) => b.wavelengthNm === 1550)!.allowedDb).toBeCloseTo(
      1.636 * 0.5 + 0.01 + 0.5 + 3,
      9,
    )

    const read = await request(t.app)
      .get(path())
      .set('Authorization', await t.tokenFor('office'))
    expect(read.body.settings).toEqual(good)
  })

  it.each([
    ['a negative splice loss', { ...good, spliceLossDb: -0.1 }, 'spliceLossDb'],
    [
      'a wavelength listed twice',
      {
        ...good,
        attenuationByWavelength: [
          { wavelength: 1310, dbPerKm: 0.3 },
          { wavelength: 1310, dbPerKm: 0.4 },
        ],
      },
      'attenuationByWavelength.1.wavelength',
    ],
    [
      'a wavelength that is not one',
      { ...good, attenuationByWavelength: [{ wavelength: 1200, dbPerKm: 0.3 }] },
      'attenuationByWavelength.0.wavelength',
    ],
    ['attenuation as text', { ...good, attenuationDbPerKm: '0.4' }, 'attenuationDbPerKm'],
    [
      'a missing field',
      {
        attenuationDbPerKm: null,
        attenuationByWavelength: [],
        spliceLossDb: null,
        connectorPairLossDb: null,
      },
      'marginDb',
    ],
    ['an unknown field', { ...good, otdrToleranceM: 20 }, ''],
    ['a margin past 50 dB', { ...good, marginDb: 51 }, 'marginDb'],
  ])('when the body has %s, then the answer is 400 and nothing changes', async (_what, body, field) => {
    const before = stored()
    const res = await request(t.app)
      .put(path())
      .set('Authorization', await t.tokenFor('office'))
      .send(body)
    expect(res.status).toBe(400)
    expect(res.body.error.code).toBe('invalid_input')
    expect((res.body.error.details as { path: string }[]).map((d) => d.path)).toContain(field)
    expect(stored()).toEqual(before)
  })

  it('when a foreman asks, then the settings are refused', async () => {
    const before = stored()
    const res = await request(t.app)
      .put(path())
      .set('Authorization', await t.tokenFor('foreman'))
      .send(good)
    expect(res.status).toBe(403)
    expect(
      (
        await request(t.app)
          .get(path())
          .set('Authorization', await t.tokenFor('foreman'))
      ).status,
    ).toBe(403)
    expect(stored()).toEqual(before)
  })
})
