/** Allowances a loss budget uses when the project sets none of its own. */
export const defaultBudgetAllowances = {
  spliceLossDb: 0.3, // ANSI/TIA-568.3-D (2016), from memory; ISO/IEC 11801 gives the same
  connectorPairLossDb: 0.75, // ANSI/TIA-568.3-D (2016), mated connector pair
  attenuationDbPerKm: {
    singleModeOutsidePlant: 0.5, // ANSI/TIA-568.3-D, 1310/1550 nm, from memory
    singleModeInsidePlant: 1.0, // ANSI/TIA-568.3-D, 1310/1550 nm, from memory
    multimode850: 3.0, // ANSI/TIA-568.3-D, from memory
    multimode1300: 1.5, // ANSI/TIA-568.3-D, from memory
  },
} as const

/** ITU-T limits for G.652.D and G.657.A fiber, the usual outside-plant single-mode types. */
export const ituSingleModeLimits = {
  cabledAttenuation: [
    { fromNm: 1310, toNm: 1625, maxDbPerKm: 0.4 }, // ITU-T G.652 (11/2016), G.657
    { fromNm: 1530, toNm: 1565, maxDbPerKm: 0.3 }, // ITU-T G.652 (11/2016), G.657
  ],
  // ITU-T G.657 (11/2016): nominal 8.6–9.2 µm at 1310 nm, each nominal value held to ±0.4 µm.
  modeFieldDiameter1310Um: { nominalMinUm: 8.6, nominalMaxUm: 9.2, toleranceUm: 0.4 },
} as const

/** The tightest ITU-T cabled attenuation limit (dB/km) covering a wavelength, or null outside every range. */
export function cabledAttenuationLimitDbPerKm(wavelengthNm: number): number | null {
  let limit: number | null = null
  for (const range of ituSingleModeLimits.cabledAttenuation) {
    if (wavelengthNm >= range.fromNm && wavelengthNm <= range.toNm) {
      limit = limit === null ? range.maxDbPerKm : Math.min(limit, range.maxDbPerKm)
    }
  }
  return limit
}

export type LinkLossInput = {
  lengthKm: number
  attenuationDbPerKm: number
  splices: number
  spliceLossDb: number
  connectorPairs: number
  connectorLossDb: number
  /** Other losses the link carries, e.g. higher-order-mode loss on multimode. */
  extraDb?: number
  /** Design margin added on top (repairs, ageing). */
  marginDb?: number
}

export type LinkLoss = {
  fiberDb: number
  splicesDb: number
  connectorsDb: number
  extraDb: number
  marginDb: number
  totalDb: number
}

/** Expected link attenuation: α·L + splices × splice loss + connector pairs × connector loss + extra + margin (ITU-T G.652 Appendix I). */
export function linkLoss(input: LinkLossInput): LinkLoss {
  const { lengthKm, attenuationDbPerKm, splices, spliceLossDb, connectorPairs, connectorLossDb } = input
  const extraDb = input.extraDb ?? 0
  const marginDb = input.marginDb ?? 0
  for (const [name, value] of Object.entries({ ...input, extraDb, marginDb })) {
    if (!Number.isFinite(value) || value < 0)
      throw new RangeError(`${name} must be a number from 0, got ${value}.`)
  }
  const fiberDb = lengthKm * attenuationDbPerKm
  const splicesDb = splices * spliceLossDb
  const connectorsDb = connectorPairs * connectorLossDb
  return {
    fiberDb,
    splicesDb,
    connectorsDb,
    extraDb,
    marginDb,
    totalDb: fiberDb + splicesDb + connectorsDb + extraDb + marginDb,
  }
}

export type BudgetMarginInput =
  | { txPowerDbm: number; rxSensitivityDbm: number; linkLossDb: number }
  | { budgetDb: number; linkLossDb: number }

/** What is left of the power budget after the link's loss: (transmit power − receiver sensitivity) − link loss, in dB. */
export function budgetMargin(input: BudgetMarginInput): number {
  const budgetDb = 'budgetDb' in input ? input.budgetDb : input.txPowerDbm - input.rxSensitivityDbm
  return budgetDb - input.linkLossDb
}

/** Where each default allowance comes from (REFERENCE.md §2), worded for the people who set a project up. */
export const budgetAllowanceSources = {
  spliceLossDb: 'ANSI/TIA-568.3-D (2016) splice maximum — from memory; ISO/IEC 11801 gives the same',
  connectorPairLossDb: 'ANSI/TIA-568.3-D (2016), mated connector pair',
  singleModeAttenuation: 'ANSI/TIA-568.3-D, single-mode outside plant at 1310/1550 nm — from memory',
  multimode850: 'ANSI/TIA-568.3-D, multimode at 850 nm — from memory',
  multimode1300: 'ANSI/TIA-568.3-D, multimode at 1300 nm — from memory',
  marginDb: 'No design margin unless the project sets one',
  project: 'Set for this project',
} as const

/** A project's own allowances as stored: null (or a wavelength not listed) means the default. */
export interface BudgetSettings {
  attenuationDbPerKm: number | null
  attenuationByWavelength: readonly { wavelength: number; dbPerKm: number }[]
  spliceLossDb: number | null
  connectorPairLossDb: number | null
  marginDb: number | null
}

export const noBudgetSettings: BudgetSettings = {
  attenuationDbPerKm: null,
  attenuationByWavelength: [],
  spliceLossDb: null,
  connectorPairLossDb: null,
  marginDb: null,
}

export interface Allowance {
  value: number
  source: string
}

/** The default cable attenuation of a wavelength: multimode figures at 850 and 1300 nm, single-mode outside plant otherwise. */
export function defaultAttenuation(wavelengthNm: number): Allowance {
  const a = defaultBudgetAllowances.attenuationDbPerKm
  if (wavelengthNm === 850) return { value: a.multimode850, source: budgetAllowanceSources.multimode850 }
  if (wavelengthNm === 1300) return { value: a.multimode1300, source: budgetAllowanceSources.multimode1300 }
  return { value: a.singleModeOutsidePlant, source: budgetAllowanceSources.singleModeAttenuation }
}

/** The allowances a loss budget at one wavelength uses: the project's own where set, else the defaults, each with its source. */
export function effectiveAllowances(settings: BudgetSettings, wavelengthNm: number) {
  const own = (value: number | null, fallback: Allowance): Allowance =>
    value === null ? fallback : { value, source: budgetAllowanceSources.project }
  const listed = settings.attenuationByWavelength.find((w) => w.wavelength === wavelengthNm)
  return {
    wavelengthNm,
    attenuationDbPerKm: listed
      ? { value: listed.dbPerKm, source: budgetAllowanceSources.project }
      : own(settings.attenuationDbPerKm, defaultAttenuation(wavelengthNm)),
    spliceLossDb: own(settings.spliceLossDb, {
      value: defaultBudgetAllowances.spliceLossDb,
      source: budgetAllowanceSources.spliceLossDb,
    }),
    connectorPairLossDb: own(settings.connectorPairLossDb, {
      value: defaultBudgetAllowances.connectorPairLossDb,
      source: budgetAllowanceSources.connectorPairLossDb,
    }),
    marginDb: own(settings.marginDb, { value: 0, source: budgetAllowanceSources.marginDb }),
  }
}
export type EffectiveAllowances = ReturnType<typeof effectiveAllowances>
