import type { ClosureKind, ClosureState } from '#shared/schemas/enums'

export const kindLabels: Record<ClosureKind, string> = {
  handhole: 'Handhole',
  vault: 'Vault / manhole',
  pedestal: 'Pedestal',
  aerial: 'Aerial',
  building: 'Building',
  other: 'Other',
}

export const stateLabels: Record<ClosureState, string> = {
  planned: 'Planned',
  in_progress: 'In progress',
  signed_off: 'Signed off',
  reopened: 'Reopened',
}

/** Counts shown for a closure or a tray. */
export interface ProgressCounts {
  planned: number
  logged: number
  flagged: number
  offPlan: number
}

/** Where the closure is, in words: route position and coordinates when the device has them. */
export function whereText(closure: {
  routePositionM: number | null
  lat: number | null
  lon: number | null
}): string {
  const parts: string[] = []
  if (closure.routePositionM !== null)
    parts.push(`${Math.round(closure.routePositionM).toLocaleString()} m along the route`)
  if (closure.lat !== null && closure.lon !== null)
    parts.push(`${closure.lat.toFixed(5)}, ${closure.lon.toFixed(5)}`)
  return parts.join(' · ') || 'Position not recorded'
}
