import { z } from 'zod'

/** The four roles; rights per role live in the server's policy table. */
export const roles = ['splicer', 'foreman', 'office', 'inspector'] as const
export const roleSchema = z.enum(roles)
export type Role = z.infer<typeof roleSchema>

/** Where a closure sits; decides which safety cautions apply. */
export const closureKinds = ['handhole', 'vault', 'pedestal', 'aerial', 'building', 'other'] as const
export const closureKindSchema = z.enum(closureKinds)
export type ClosureKind = z.infer<typeof closureKindSchema>

/** A closure's life: open for work, signed off by the foreman, reopened with a reason. */
export const closureStates = ['planned', 'in_progress', 'signed_off', 'reopened'] as const
export const closureStateSchema = z.enum(closureStates)
export type ClosureState = z.infer<typeof closureStateSchema>

export const cableConstructions = ['loose_tube', 'ribbon'] as const
export const cableConstructionSchema = z.enum(cableConstructions)
export type CableConstruction = z.infer<typeof cableConstructionSchema>

/** Colour sequences a cable can follow; TIA-598 unless the cable says otherwise. */
export const colourSchemes = ['tia598'] as const
export const colourSchemeSchema = z.enum(colourSchemes)
export type ColourSchemeName = z.infer<typeof colourSchemeSchema>

export const fiberTypes = ['G.652.D', 'G.657.A1', 'G.657.A2', 'G.655', 'OM3', 'OM4', 'OM5'] as const
export const fiberTypeSchema = z.enum(fiberTypes)
export type FiberType = z.infer<typeof fiberTypeSchema>

export const spliceMethods = ['single_fusion', 'ribbon_fusion', 'mechanical'] as const
export const spliceMethodSchema = z.enum(spliceMethods)
export type SpliceMethod = z.infer<typeof spliceMethodSchema>

/** Wavelengths limits and OTDR results are kept for, in nm. */
export const wavelengths = [850, 1300, 1310, 1490, 1550, 1625] as const
export const wavelengthSchema = z.literal(wavelengths)
export type Wavelength = (typeof wavelengths)[number]

/** Reasons a splicer gives for making a splice again (common practice). */
export const respliceReasons = [
  'high_loss',
  'bad_cleave',
  'bubble',
  'fat_or_thin',
  'dust_line',
  'core_offset',
  'fiber_break',
  'wrong_fiber',
  'macrobend',
  'other',
] as const
export const respliceReasonSchema = z.enum(respliceReasons)
export type RespliceReason = z.infer<typeof respliceReasonSchema>

/** How a splice's loss stands against the project's limits (see shared/domain/acceptance). */
export const spliceStatuses = [
  'ok',
  'over_target',
  'accepted_with_flag',
  'over_maximum',
  'no_reading',
] as const
export const spliceStatusSchema = z.enum(spliceStatuses)
export type SpliceStatus = z.infer<typeof spliceStatusSchema>

/** Checks raised on a splice as it is logged or measured, in the order they are reported. */
export const spliceFlags = [
  'over_target',
  'over_maximum',
  'attempts_exhausted',
  'gainer_one_way',
  'both_negative',
  'one_way_only',
  'estimate_disagrees',
  'plan_mismatch',
  'fiber_reused',
  'slot_reused',
  'resplice',
  'closure_signed_off',
] as const
export const spliceFlagSchema = z.enum(spliceFlags)
export type SpliceFlag = z.infer<typeof spliceFlagSchema>

/** When a splice needs a photo of its own. */
export const photoPerSpliceRules = ['none', 'over_target', 'always'] as const
export const photoPerSpliceRuleSchema = z.enum(photoPerSpliceRules)
export type PhotoPerSpliceRule = z.infer<typeof photoPerSpliceRuleSchema>
