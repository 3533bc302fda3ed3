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
