import { createRequire } from 'node:module'
import PDFDocument from 'pdfkit'
import { rawSqlite } from '#db/client'
import { rollUpClosure, type ClosureRollup, type RollupSplice } from '#shared/domain/rollup'
import { defaultPhotoRules, type PhotoRules, type ProjectLimits } from '#shared/schemas/project'
import type { AppContext } from '../context'
import type { Actor } from '../middleware/auth'
import { listSheetSplices, type SheetSplice } from '../repositories/spliceSheet'
import { loadProjectLimits } from '../repositories/splices'
import { getClosure } from './closures'
import { fiberColours } from './exports'
import { measuredForSplices, type MeasuredLoss } from './otdrResults'

const require = createRequire(import.meta.url)
// Roboto (latin subset) as shipped with the app's own fonts, so the PDF needs no network and no system fonts.
const fontFile =
  require.resolve('@quasar/extras/roboto-font/web-font/KFO7CnqEu92Fr1ME7kSn66aGLdTylUAMa3yUBA.woff2')

const photoLimit = 12

/** The office acting as the system, for reports the server builds on its own (stored copies, mail). */
export function systemActor(ctx: AppContext): Actor {
  const office = ctx.database.sqlite
    .prepare(
      "SELECT id, email, name FROM users WHERE role = 'office' AND active = 1 ORDER BY created_at LIMIT 1",
    )
    .get() as { id: string; email: string; name: string } | undefined
  return {
    id: office?.id ?? 'system',
    email: office?.email ?? '',
    name: 'Lightseam',
    role: 'office',
    crewId: null,
  }
}

/** Everything the close-out report shows about one closure. */
export interface CloseOutData {
  closure: {
    id: string
    label: string
    kind: string
    state: string
    lat: number | null
    lon: number | null
    routePositionM: number | null
    crewName: string | null
    signedOffBy: string | null
    signedOffAt: string | null
  }
  project: { code: string; name: string }
  limits: ProjectLimits
  rollup: ClosureRollup
  splices: SheetSplice[]
  measured: Map<string, MeasuredLoss[]>
  notes: { body: string; author: string; createdAt: string }[]
  photos: { sha256: string; mime: string; caption: string; bytes: Buffer }[]
}

async function readAll(stream: NodeJS.ReadableStream): Promise<Buffer> {
  const chunks: Buffer[] = []
  for await (const chunk of stream) chunks.push(Buffer.from(chunk as Buffer))
  return Buffer.concat(chunks)
}

/**
 * Gathers the report's data; `measured` defaults to the OTDR results stored for the closure's splices
 * and can be given (reports built from a reconciliation in hand). `photos: false` skips reading the photo
 * bytes (for a summary that draws no page).
 */
export async function closeOutData(
  ctx: AppContext,
  actor: Actor,
  closureId: unknown,
  options: { measured?: Map<string, MeasuredLoss[]>; photos?: boolean } = {},
): Promise<CloseOutData> {
  const closure = getClosure(ctx, actor, closureId)
  const sqlite = ctx.database.sqlite
  const one = <T>(sql: string, ...params: unknown[]) => sqlite.prepare(sql).get(...params) as T
  const many = <T>(sql: string, ...params: unknown[]) => sqlite.prepare(sql).all(...params) as T[]
  const project = one<{ code: string; name: string; photo_rules: string }>(
    'SELECT code, name, photo_rules FROM projects WHERE id = ?',
    closure.projectId,
  )
  const limits = loadProjectLimits(sqlite, closure.projectId)!
  const photoRules = (JSON.parse(project.photo_rules) as PhotoRules | null) ?? defaultPhotoRules
  const plan = many<{
    trayId: string
    slot: number
    cableAId: string
    fiberA: number
    cableBId: string
    fiberB: number
  }>(
    `SELECT tray_id AS trayId, slot, cable_a_id AS cableAId, fiber_a AS fiberA, cable_b_id AS cableBId, fiber_b AS fiberB
       FROM plan_rows WHERE closure_id = ? AND deleted = 0`,
    closure.id,
  )
  const rollupSplices = many<RollupSplice>(
    `SELECT id, tray_id AS trayId, slot, cable_a_id AS cableAId, fiber_a AS fiberA, cable_b_id AS cableBId,
            fiber_b AS fiberB, loss_db AS lossDb, attempt, accept_reason AS acceptReason, supersedes_id AS supersedesId
       FROM splices WHERE closure_id = ? AND deleted = 0`,
    closure.id,
  )
  const links = many<{
    sha256: string
    entity: string
    entity_id: string
    mime: string
    storage_key: string | null
  }>(
    `SELECT l.sha256, l.entity, l.entity_id, p.mime, p.storage_key
       FROM photo_links l LEFT JOIN photos p ON p.sha256 = l.sha256
      WHERE l.deleted = 0 AND (
        (l.entity = 'closure' AND l.entity_id = ?)
        OR (l.entity = 'tray' AND l.entity_id IN (SELECT id FROM trays WHERE closure_id = ? AND deleted = 0))
        OR (l.entity = 'splice' AND l.entity_id IN (SELECT id FROM splices WHERE closure_id = ? AND deleted = 0)))
      ORDER BY l.created_at`,
    closure.id,
    closure.id,
    closure.id,
  )
  const perSplice: Record<string, number> = {}
  const perTray: Record<string, number> = {}
  let closurePhotos = 0
  for (const link of links) {
    if (link.entity === 'splice') perSplice[link.entity_id] = (perSplice[link.entity_id] ?? 0) + 1
    else if (link.entity === 'tray') perTray[link.entity_id] = (perTray[link.entity_id] ?? 0) + 1
    else closurePhotos += 1
  }
  const rollup = rollUpClosure(plan, rollupSplices, limits, {
    photoCounts: { perSplice, perTray, closure: closurePhotos },
    photoRules,
  })
  const splices = listSheetSplices(sqlite, { closureId: closure.id })
  const photos: CloseOutData['photos'] = []
  const seen = new Set<string>()
  for (const link of options.photos === false ? [] : links) {
    if (photos.length >= photoLimit || seen.has(link.sha256) || !link.storage_key) continue
    if (link.mime !== 'image/jpeg' && link.mime !== 'image/png') continue
    seen.add(link.sha256)
    try {
      const bytes = await readAll(await ctx.storage.photos.read(link.storage_key))
      photos.push({
        sha256: link.sha256,
        mime: link.mime,
        caption: `${link.entity} photo ${link.sha256.slice(0, 12)}`,
        bytes,
      })
    } catch {
      // A photo whose bytes are not stored yet is listed by the roll-up's photo count, not drawn.
    }
  }
  const crew = closure.crewId
    ? one<{ name: string } | undefined>('SELECT name FROM crews WHERE id = ?', closure.crewId)
    : undefined
  const signer = closure.signedOffBy
    ? one<{ name: string } | undefined>('SELECT name FROM users WHERE id = ?', closure.signedOffBy)
    : undefined
  return {
    closure: {
      id: closure.id,
      label: closure.label,
      kind: closure.kind,
      state: closure.state,
      lat: closure.lat,
      lon: closure.lon,
      routePositionM: closure.routePositionM,
      crewName: crew?.name ?? null,
      signedOffBy: signer?.name ?? null,
      signedOffAt: closure.signedOffAt,
    },
    project: { code: project.code, name: project.name },
    limits,
    rollup,
    splices,
    measured:
      options.measured ??
      measuredForSplices(
        rawSqlite(sqlite),
        splices.map((s) => s.id),
      ),
    notes: many<{ body: string; author: string; createdAt: string }>(
      `SELECT n.body, u.name AS author, n.created_at AS createdAt FROM notes n JOIN users u ON u.id = n.author_id
        WHERE n.entity = 'closure' AND n.entity_id = ? ORDER BY n.created_at`,
      closure.id,
    ),
    photos,
  }
}

const dB = (value: number | null | undefined) =>
  value === null || value === undefined ? '—' : `${value.toFixed(3)} dB`

/** How a flagged attempt was dealt with, in words for the report. */
function resolutionOf(s: SheetSplice): string {
  if (s.flags.length === 0) return ''
  if (!s.isCurrent) return 'Re-spliced'
  if (s.reviewState === 'accepted') return `Accepted${s.acceptReason ? `: ${s.acceptReason}` : ''}`
  if (s.reviewState === 'sent_back') return 'Sent back'
  if (s.acceptReason) return `Accepted with flag: ${s.acceptReason}`
  return 'Open'
}

/** Renders the close-out report as a PDF (A4, Roboto); measured columns are filled where OTDR results exist. */
export function renderCloseOut(data: CloseOutData, generatedAt = new Date()): Promise<Buffer> {
  const doc = new PDFDocument({
    size: 'A4',
    margin: 40,
    bufferPages: true,
    info: { Title: `Close-out ${data.closure.label}`, Creator: 'Lightseam' },
  })
  doc.registerFont('body', fontFile)
  doc.font('body')
  const chunks: Buffer[] = []
  doc.on('data', (chunk: Buffer) => chunks.push(chunk))
  const done = new Promise<Buffer>((resolve, reject) => {
    doc.on('end', () => resolve(Buffer.concat(chunks)))
    doc.on('error', reject)
  })
  const left = doc.page.margins.left
  const width = doc.page.width - left - doc.page.margins.right
  const heading = (text: string) => {
    doc.moveDown(0.6).fontSize(13).fillColor('#0b3954').text(text, left).fillColor('black').fontSize(9)
  }
  const pair = (label: string, value: string) => doc.fontSize(9).text(`${label}: ${value}`, left)

  const c = data.closure
  doc.fontSize(18).text(`Close-out report — ${c.label}`, left)
  doc.fontSize(10).text(`${data.project.code} · ${data.project.name}`)
  doc
    .fontSize(8)
    .fillColor('#555')
    .text(`Generated ${generatedAt.toISOString()} by Lightseam`)
    .fillColor('black')

  heading('Closure')
  pair('Kind', c.kind)
  pair('State', c.state)
  pair('Crew', c.crewName ?? '—')
  pair('Route position', c.routePositionM === null ? '—' : `${c.routePositionM} m`)
  pair('Location', c.lat === null || c.lon === null ? '—' : `${c.lat.toFixed(6)}, ${c.lon.toFixed(6)}`)

  const r = data.rollup
  heading('Roll-up (estimated loss)')
  pair('Planned splices', String(r.planned))
  pair('Logged', `${r.logged} (${r.completionPct}% complete)`)
  pair('Off plan', String(r.offPlan))
  pair('Wrong pair in slot', String(r.mismatches))
  pair('Total estimated loss', dB(r.totalLossDb))
  pair('Mean estimated loss', dB(r.meanLossDb))
  pair('Max estimated loss', dB(r.maxLossDb))
  pair('Over target', `${r.overTarget} (target ${data.limits.estimate.contractTargetDb} dB)`)
  pair('Over maximum', `${r.overMaximum} (maximum ${data.limits.estimate.standardMaxDb} dB)`)
  pair('Re-splices', String(r.resplices))
  pair('Splices with photos', `${r.photos}; missing photos ${r.missingPhotos.total}`)

  heading('Splices')
  const cols = [
    { title: 'Tray/slot', w: 0.08 },
    { title: 'Fiber A (tube, colour)', w: 0.2 },
    { title: 'Fiber B (tube, colour)', w: 0.2 },
    { title: 'Try', w: 0.05 },
    { title: 'Estimated', w: 0.1 },
    { title: 'Measured (OTDR avg)', w: 0.15 },
    { title: 'Flags and resolution', w: 0.22 },
  ]
  const drawRow = (cells: string[], header = false) => {
    doc.fontSize(header ? 8 : 7.5).fillColor(header ? '#0b3954' : 'black')
    const heights = cells.map((text, i) => doc.heightOfString(text, { width: cols[i]!.w * width - 4 }))
    const h = Math.max(...heights) + 3
    if (doc.y + h > doc.page.height - doc.page.margins.bottom - 40) {
      doc.addPage()
      doc.font('body')
    }
    const y = doc.y
    let x = left
    cells.forEach((text, i) => {
      doc.text(text, x, y, { width: cols[i]!.w * width - 4 })
      x += cols[i]!.w * width
    })
    doc.y = y + h
    doc.x = left
    doc.fillColor('black')
  }
  drawRow(
    cols.map((col) => col.title),
    true,
  )
  for (const s of data.splices) {
    const a = fiberColours(s.cableA.layout, s.fiberA)
    const b = fiberColours(s.cableB.layout, s.fiberB)
    const measured = (data.measured.get(s.id) ?? [])
      .map(
        (m) => `${m.wavelengthNm} nm: ${dB(m.averageDb)}${m.flags.length ? ` (${m.flags.join(', ')})` : ''}`,
      )
      .join('\n')
    const flags = s.flags.length ? `${s.flags.join(', ')}\n${resolutionOf(s)}` : '—'
    drawRow([
      `${s.trayNumber}/${s.slot}`,
      `${s.cableA.label} #${s.fiberA}\n${a.unit} · ${a.fiber}`,
      `${s.cableB.label} #${s.fiberB}\n${b.unit} · ${b.fiber}`,
      `${s.attempt}${s.isCurrent ? '' : ' (replaced)'}`,
      dB(s.lossDb),
      measured || 'not measured',
      flags,
    ])
  }
  if (data.splices.length === 0) doc.text('No splices were logged.')

  heading('Notes')
  if (data.notes.length === 0) doc.text('No notes.')
  for (const n of data.notes) doc.text(`${n.createdAt.slice(0, 16).replace('T', ' ')} ${n.author}: ${n.body}`)

  heading('Photos')
  if (data.photos.length === 0) doc.text('No photos are stored for this closure.')
  for (const photo of data.photos) {
    if (doc.y + 170 > doc.page.height - doc.page.margins.bottom - 40) {
      doc.addPage()
      doc.font('body')
    }
    try {
      doc.image(photo.bytes, left, doc.y, { fit: [220, 150] })
      doc.y += 152
    } catch {
      doc.text('(this photo could not be drawn)')
    }
    doc.fontSize(7).text(photo.caption, left).fontSize(9)
  }

  heading('Sign-off')
  doc.text(
    c.signedOffAt
      ? `Signed off by ${c.signedOffBy ?? 'unknown'} at ${c.signedOffAt} (time recorded on the device).`
      : 'Not signed off.',
  )

  // The footer goes on every page once the content is laid out.
  const footer =
    'Estimated values are the splicer’s fusion-splicer estimates; measured values are OTDR bidirectional averages ' +
    'imported by the office, shown only where a measurement exists. Acceptance follows the project’s contract and ' +
    'applicable standards; this report does not by itself accept the work.'
  const range = doc.bufferedPageRange()
  for (let i = range.start; i < range.start + range.count; i += 1) {
    doc.switchToPage(i)
    const bottom = doc.page.margins.bottom
    doc.page.margins.bottom = 0
    doc
      .fontSize(7)
      .fillColor('#444')
      .text(`${footer}  Page ${i + 1} of ${range.count}.`, left, doc.page.height - 36, { width })
    doc.page.margins.bottom = bottom
  }
  doc.end()
  return done
}

/** The file name the close-out PDF of a closure goes by, in downloads and mail. */
export const closeOutFilename = (label: string) => `close-out-${label.replace(/[^A-Za-z0-9._-]+/g, '-')}.pdf`

/** The closure's close-out report as a PDF file, rendered now from the rows as they are. */
export async function closeOutFile(ctx: AppContext, actor: Actor, closureId: unknown) {
  const data = await closeOutData(ctx, actor, closureId)
  return {
    filename: closeOutFilename(data.closure.label),
    contentType: 'application/pdf',
    body: await renderCloseOut(data),
  }
}
