import { writeTransaction, type Sqlite } from '#db/client'
import { effectiveAllowances, noBudgetSettings, type BudgetSettings } from '#shared/domain/budget'
import { lossBudgetSettingsSchema, type LossBudgetView } from '#shared/schemas/otdr'
import type { AppContext } from '../context'
import type { Actor } from '../middleware/auth'
import { recordFieldChanges } from '../repositories/audit'
import { getProject } from './projects'

interface SettingsRow {
  attenuation_db_per_km: number | null
  attenuation_by_wavelength: string
  splice_loss_db: number | null
  connector_pair_loss_db: number | null
  margin_db: number | null
}

/** A project's stored loss budget settings; a project that set none gets every default. */
export function readBudgetSettings(sqlite: Sqlite, projectId: string): BudgetSettings {
  const row = sqlite.prepare('SELECT * FROM loss_budget_settings WHERE project_id = ?').get(projectId) as
    SettingsRow | undefined
  if (!row) return { ...noBudgetSettings, attenuationByWavelength: [] }
  return {
    attenuationDbPerKm: row.attenuation_db_per_km,
    attenuationByWavelength: JSON.parse(
      row.attenuation_by_wavelength,
    ) as BudgetSettings['attenuationByWavelength'],
    spliceLossDb: row.splice_loss_db,
    connectorPairLossDb: row.connector_pair_loss_db,
    marginDb: row.margin_db,
  }
}

function viewOf(projectId: string, settings: BudgetSettings, wavelengths: number[]): LossBudgetView {
  return {
    projectId,
    settings: settings as LossBudgetView['settings'],
    effective: wavelengths.map((w) => effectiveAllowances(settings, w)),
  }
}

/** What the project set and what the budget at each of its wavelengths uses. */
export function getLossBudget(ctx: AppContext, actor: Actor, projectId: unknown): LossBudgetView {
  const project = getProject(ctx, actor, projectId)
  const wavelengths = project.limits.perWavelength.map((l) => l.wavelength)
  return viewOf(project.id, readBudgetSettings(ctx.database.sqlite, project.id), wavelengths)
}

/** Replaces the project's loss budget settings (null = the default); each changed field is audited. */
export function putLossBudget(
  ctx: AppContext,
  actor: Actor,
  projectId: unknown,
  body: unknown,
): LossBudgetView {
  const project = getProject(ctx, actor, projectId)
  const input = lossBudgetSettingsSchema.parse(body)
  const { sqlite } = ctx.database
  const saved = writeTransaction(sqlite, () => {
    const before = readBudgetSettings(sqlite, project.id)
    sqlite
      .prepare(
        `INSERT INTO loss_budget_settings (project_id, attenuation_db_per_km, attenuation_by_wavelength, splice_loss_db, connector_pair_loss_db, margin_db)
         VALUES (@projectId, @attenuationDbPerKm, @attenuationByWavelength, @spliceLossDb, @connectorPairLossDb, @marginDb)
         ON CONFLICT (project_id) DO UPDATE SET attenuation_db_per_km = excluded.attenuation_db_per_km,
           attenuation_by_wavelength = excluded.attenuation_by_wavelength, splice_loss_db = excluded.splice_loss_db,
           connector_pair_loss_db = excluded.connector_pair_loss_db, margin_db = excluded.margin_db`,
      )
      .run({
        ...input,
        projectId: project.id,
        attenuationByWavelength: JSON.stringify(input.attenuationByWavelength),
      })
    recordFieldChanges(
      ctx.database.db,
      { userId: actor.id, entity: 'loss_budget', entityId: project.id, at: new Date().toISOString() },
      { ...before },
      { ...input },
    )
    return readBudgetSettings(sqlite, project.id)
  })
  return viewOf(
    project.id,
    saved,
    project.limits.perWavelength.map((l) => l.wavelength),
  )
}
