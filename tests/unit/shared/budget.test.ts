import { describe, expect, it } from 'vitest'
import {
  budgetMargin,
  cabledAttenuationLimitDbPerKm,
  defaultBudgetAllowances,
  effectiveAllowances,
  noBudgetSettings,
  ituSingleModeLimits,
  linkLoss,
} from '#shared/domain/budget'
import { defaultProjectLimits } from '#shared/schemas/project'

const closeTo3 = (actual: number, expected: number) => expect(Math.abs(actual - expected)).toBeLessThan(5e-4)

describe('loss limits, REFERENCE §2', () => {
  it('when no allowance is set, then a splice is allowed 0.3 dB (ANSI/TIA-568.3-D 2016, from memory)', () => {
    expect(defaultBudgetAllowances.spliceLossDb).toBe(0.3)
    expect(defaultProjectLimits.estimate.standardMaxDb).toBe(0.3)
  })

  it('when no allowance is set, then a mated connector pair is allowed 0.75 dB (ANSI/TIA-568.3-D 2016)', () => {
    expect(defaultBudgetAllowances.connectorPairLossDb).toBe(0.75)
  })

  it('when no attenuation is set, then cable allowances follow ANSI/TIA-568.3-D (from memory)', () => {
    expect(defaultBudgetAllowances.attenuationDbPerKm).toEqual({
      singleModeOutsidePlant: 0.5,
      singleModeInsidePlant: 1.0,
      multimode850: 3.0,
      multimode1300: 1.5,
    })
  })

  it('when G.652.D / G.657.A cable is checked, then it is held to 0.40 dB/km at 1310–1625 nm and 0.30 at 1530–1565 (ITU-T G.652 11/2016, G.657)', () => {
    expect(ituSingleModeLimits.cabledAttenuation).toEqual([
      { fromNm: 1310, toNm: 1625, maxDbPerKm: 0.4 },
      { fromNm: 1530, toNm: 1565, maxDbPerKm: 0.3 },
    ])
    expect(cabledAttenuationLimitDbPerKm(1310)).toBe(0.4)
    expect(cabledAttenuationLimitDbPerKm(1550)).toBe(0.3)
    expect(cabledAttenuationLimitDbPerKm(1625)).toBe(0.4)
    expect(cabledAttenuationLimitDbPerKm(850)).toBeNull()
  })

  it('when G.652.D / G.657.A mode field is checked, then it is 8.6–9.2 µm nominal ±0.4 µm at 1310 nm (ITU-T G.657 11/2016)', () => {
    expect(ituSingleModeLimits.modeFieldDiameter1310Um).toEqual({
      nominalMinUm: 8.6,
      nominalMaxUm: 9.2,
      toleranceUm: 0.4,
    })
  })

  it('when a project starts, then its contract target is 0.10 dB at 1310 and 1550 nm with 3 attempts (published municipal specifications; common practice)', () => {
    expect(defaultProjectLimits.estimate.contractTargetDb).toBe(0.1)
    expect(defaultProjectLimits.perWavelength).toEqual([
      { wavelength: 1310, standardMaxDb: 0.3, contractTargetDb: 0.1 },
      { wavelength: 1550, standardMaxDb: 0.3, contractTargetDb: 0.1 },
    ])
    expect(defaultProjectLimits.attemptsBeforeAcceptWithFlag).toBe(3)
  })
})

describe('loss budget, REFERENCE §5 (ITU-T G.652 Appendix I)', () => {
  it('when 10 km of single-mode at 1310 nm has 1 splice and 2 connectors with 3 dB margin, then the link loss is 7.51 dB (published worked example)', () => {
    const loss = linkLoss({
      lengthKm: 10,
      attenuationDbPerKm: 0.35,
      splices: 1,
      spliceLossDb: 0.01,
      connectorPairs: 2,
      connectorLossDb: 0.5,
      marginDb: 3.0,
    })
    closeTo3(loss.totalDb, 7.51)
    closeTo3(loss.fiberDb, 3.5)
    expect(loss.extraDb).toBe(0)
  })

  it('when 2 km of multimode has 5 connectors, 2 splices and 0.5 dB higher-order-mode loss on a 13 dB budget, then the loss is 6.0 dB and the margin 7.0 dB (published equipment hardware guide)', () => {
    const loss = linkLoss({
      lengthKm: 2,
      attenuationDbPerKm: 1,
      splices: 2,
      spliceLossDb: 0.5,
      connectorPairs: 5,
      connectorLossDb: 0.5,
      extraDb: 0.5,
    })
    closeTo3(loss.totalDb, 6.0)
    closeTo3(budgetMargin({ budgetDb: 13, linkLossDb: loss.totalDb }), 7.0)
    closeTo3(budgetMargin({ txPowerDbm: -5, rxSensitivityDbm: -18, linkLossDb: loss.totalDb }), 7.0)
  })

  it('when a quantity is negative, then the budget is refused', () => {
    expect(() =>
      linkLoss({
        lengthKm: -1,
        attenuationDbPerKm: 0.35,
        splices: 0,
        spliceLossDb: 0,
        connectorPairs: 0,
        connectorLossDb: 0,
      }),
    ).toThrow(RangeError)
  })
})

describe('allowances a project budget uses (REFERENCE §2 defaults)', () => {
  it('when a project sets nothing, then 1310 and 1550 nm use 0.5 dB/km and 850 / 1300 nm the multimode 3.0 / 1.5 dB/km (ANSI/TIA-568.3-D, from memory)', () => {
    expect(effectiveAllowances(noBudgetSettings, 1310).attenuationDbPerKm.value).toBe(0.5)
    expect(effectiveAllowances(noBudgetSettings, 1550).attenuationDbPerKm.value).toBe(0.5)
    expect(effectiveAllowances(noBudgetSettings, 850).attenuationDbPerKm.value).toBe(3.0)
    expect(effectiveAllowances(noBudgetSettings, 1300).attenuationDbPerKm.value).toBe(1.5)
    const at1550 = effectiveAllowances(noBudgetSettings, 1550)
    expect([at1550.spliceLossDb.value, at1550.connectorPairLossDb.value, at1550.marginDb.value]).toEqual([
      0.3, 0.75, 0,
    ])
  })

  it('when a project lists one wavelength, then that one uses its figure and the rest the project-wide one, else the default', () => {
    const settings = {
      ...noBudgetSettings,
      attenuationDbPerKm: 0.4,
      attenuationByWavelength: [{ wavelength: 1550, dbPerKm: 0.25 }],
    }
    expect(effectiveAllowances(settings, 1550).attenuationDbPerKm).toEqual({
      value: 0.25,
      source: 'Set for this project',
    })
    expect(effectiveAllowances(settings, 1310).attenuationDbPerKm).toEqual({
      value: 0.4,
      source: 'Set for this project',
    })
    expect(
      effectiveAllowances({ ...settings, attenuationDbPerKm: null }, 1310).attenuationDbPerKm.value,
    ).toBe(0.5)
  })
})
