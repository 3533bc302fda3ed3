import { mount, type VueWrapper } from '@vue/test-utils'
import { describe, expect, it } from 'vitest'
import { defaultProjectLimits } from '#shared/schemas/project'
import type { Splice } from '#shared/schemas/splice'
import type { FiberCable } from '@/components/fiber/types'
import SplicePanel from '@/components/splice/SplicePanel.vue'
import type { SpliceEntry } from '@/components/splice/spliceEntry'
import { withQuasar } from './support/quasar'

const cable = (id: string, label: string): FiberCable => ({
  id,
  label,
  fiberCount: 24,
  construction: 'loose_tube',
  fibersPerUnit: 12,
  unitCounts: null,
  ribbonsPerTube: null,
  colourScheme: 'tia598',
})
const cables = [cable('cable-a', 'DS-024 North'), cable('cable-b', 'DR-024 South')]
const planned = { trayId: 'tray-1', slot: 3, cableAId: 'cable-a', fiberA: 3, cableBId: 'cable-b', fiberB: 3 }

function panel(props: Record<string, unknown> = {}) {
  return mount(SplicePanel, {
    props: {
      trayId: 'tray-1',
      trayNumber: 1,
      slotNumber: 3,
      planned,
      current: null,
      cables,
      limits: defaultProjectLimits,
      defaultMethod: 'single_fusion',
      ...props,
    },
    global: withQuasar,
  })
}

async function type(wrapper: VueWrapper, keys: string) {
  for (const key of keys) await wrapper.find(`[data-key="${key}"]`).trigger('click')
}
const saved = (wrapper: VueWrapper) => wrapper.emitted<[SpliceEntry]>('save')?.at(-1)?.[0]

describe('SplicePanel', () => {
  it('when an on-target reading is saved, then the planned pair, the reading and the project method go out', async () => {
    const wrapper = panel()
    await type(wrapper, '0.02')
    expect(wrapper.find('[data-testid=over-target]').exists()).toBe(false)
    await wrapper.find('[data-testid=save-splice]').trigger('click')
    expect(saved(wrapper)).toMatchObject({
      cableAId: 'cable-a',
      fiberA: 3,
      cableBId: 'cable-b',
      fiberB: 3,
      slot: 3,
      lossDb: 0.02,
      method: 'single_fusion',
      resplice: null,
      edit: null,
      thenResplice: false,
    })
  })

  it('when the reading is over target, then it warns at once and offers re-splice or accept with a reason', async () => {
    const wrapper = panel()
    await type(wrapper, '0.15')
    expect(wrapper.find('[data-testid=over-target]').exists()).toBe(true)
    expect(wrapper.find('[data-testid=save-splice]').exists()).toBe(false)
    await wrapper.find('[data-testid=save-resplice]').trigger('click')
    expect(saved(wrapper)).toMatchObject({ lossDb: 0.15, thenResplice: true, acceptReason: null })
  })

  it('when the reading is over the standard maximum, then keeping it is not offered', async () => {
    const wrapper = panel()
    await type(wrapper, '0.5')
    expect(wrapper.find('[data-testid=over-target]').text()).toContain('must be made again')
    expect(wrapper.find('[data-testid=accept-save]').exists()).toBe(false)
  })

  it('when a logged splice is re-spliced, then the next attempt names the one it replaces and the reason', async () => {
    const current = {
      ...planned,
      id: 'splice-1',
      closureId: 'closure-1',
      method: 'single_fusion',
      lossDb: 0.15,
      attempt: 1,
      respliceReason: null,
      respliceNote: null,
      supersedesId: null,
      acceptReason: null,
      notes: '',
      splicedAt: '2026-12-01T10:00:00.000Z',
      splicerId: 'user-1',
      clientId: 'client-1',
    } satisfies Splice
    const wrapper = panel({ current, startResplice: true })
    expect(wrapper.text()).toContain('Attempt 2')
    await wrapper.find('[data-reason=bubble] input').setValue(true)
    await type(wrapper, '0.03')
    await wrapper.find('[data-testid=save-splice]').trigger('click')
    expect(saved(wrapper)?.resplice).toMatchObject({ previous: { id: 'splice-1' }, reason: 'bubble' })
    expect(saved(wrapper)?.lossDb).toBe(0.03)
  })

  it('when the slot has no plan row, then the splice is marked off-plan', () => {
    const wrapper = panel({ planned: null })
    expect(wrapper.find('[data-testid=off-plan]').text()).toContain('off-plan')
  })
})

describe('SplicePanel on a logged splice', () => {
  it('when the splice is edited later, then the change goes out as an edit of the same attempt', async () => {
    const current = {
      ...planned,
      id: 'splice-2',
      closureId: 'closure-1',
      method: 'single_fusion',
      lossDb: 0.04,
      attempt: 1,
      respliceReason: null,
      respliceNote: null,
      supersedesId: null,
      acceptReason: null,
      notes: '',
      splicedAt: '2026-12-01T10:00:00.000Z',
      splicerId: 'user-1',
      clientId: 'client-1',
    } satisfies Splice
    const wrapper = panel({ current })
    expect(wrapper.find('[data-testid=current-splice]').text()).toContain('Attempt 1')
    await wrapper.find('[data-testid=start-edit]').trigger('click')
    await wrapper.find('[data-key=clear]').trigger('click')
    await type(wrapper, '0.05')
    await wrapper.find('[data-testid=save-splice]').trigger('click')
    expect(saved(wrapper)).toMatchObject({ edit: { id: 'splice-2' }, resplice: null, lossDb: 0.05 })
  })
})
