import { mount } from '@vue/test-utils'
import { describe, expect, it, vi } from 'vitest'
import TraySlotList from '@/components/tray/TraySlotList.vue'
import { buildCable, buildPlanRow, buildSplice, buildTray, ids, testId } from '../unit/shared/builders'
import { words, withQuasar } from './support/quasar'

const limits = { standardMaxDb: 0.3, contractTargetDb: 0.1 } // REFERENCE.md §2
const cables = {
  [ids.cableA]: buildCable({ id: ids.cableA, label: 'Feeder F-144' }),
  [ids.cableB]: buildCable({ id: ids.cableB, label: 'Lateral L-48', fiberCount: 48 }),
}
const tray = buildTray({ capacity: 9 })
// Slot n plans fiber n of the feeder to fiber n of the lateral; slot 6 is left out of the plan.
const plan = [1, 2, 3, 4, 5, 7, 8, 9].map((slot) =>
  buildPlanRow({ id: testId(100 + slot), slot, fiberA: slot, fiberB: slot }),
)
const splice = (slot: number, overrides: Parameters<typeof buildSplice>[0] = {}) =>
  buildSplice({ id: testId(200 + slot), slot, fiberA: slot, fiberB: slot, ...overrides })
const splices = [
  splice(2, { lossDb: 0.03 }),
  splice(3, { lossDb: 0.15 }),
  splice(4, { lossDb: 0.02, attempt: 2, respliceReason: 'bubble', supersedesId: testId(299) }),
  splice(5, { fiberB: 6, lossDb: 0.02 }),
  splice(7, { lossDb: 0.35 }),
  splice(8, { lossDb: 0.15, attempt: 3, acceptReason: 'Third attempt; fiber end damaged upstream.' }),
  splice(9, { lossDb: null, method: 'mechanical' }),
  // A splice of another tray never shows here.
  splice(1, { id: testId(300), trayId: ids.tray2, lossDb: 0.04 }),
]

function list(props: Record<string, unknown> = {}) {
  return mount(TraySlotList, { props: { tray, plan, splices, cables, limits, ...props }, global: withQuasar })
}

describe('TraySlotList', () => {
  it('when a tray is shown, then every slot appears in order with its state in words and its own icon', () => {
    const rows = list().findAll('li')
    expect(rows.map((row) => row.attributes('data-slot'))).toEqual([
      '1',
      '2',
      '3',
      '4',
      '5',
      '6',
      '7',
      '8',
      '9',
    ])
    const states = rows.map((row) => row.attributes('data-state'))
    expect(states).toEqual([
      'todo',
      'logged',
      'over_target',
      'resplice',
      'off_plan',
      'unplanned',
      'over_maximum',
      'accepted',
      'logged',
    ])
    const chips = rows.map((row) => words(row.find('.ls-state').text()))
    expect(chips).toEqual([
      'To do',
      '0.03 dB',
      'Over target · 0.15 dB',
      'Re-spliced (attempt 2) · 0.02 dB',
      'Off plan · 0.02 dB',
      'Not in the plan',
      'Over maximum · 0.35 dB',
      'Accepted with flag · 0.15 dB · attempt 3',
      'Logged · no reading',
    ])
    const iconOf = (i: number) => rows[i]!.find('.ls-state svg').html()
    const distinct = new Set([0, 1, 2, 3, 4, 5, 6, 7].map(iconOf))
    expect(distinct.size).toBe(8)
  })

  it('when a slot holds other fibers than planned, then the planned pair and what was spliced both show', () => {
    const row = list().find('li[data-slot="5"]')
    const ends = row.findAll('[role=group]').map((end) => end.attributes('aria-label'))
    expect(ends[0]).toMatch(/^A side: Feeder F-144, fiber 5: tube 1 blue, fiber 5 slate$/)
    expect(ends[1]).toMatch(/^B side: Lateral L-48, fiber 5:/)
    expect(row.text()).toContain('Spliced Feeder F-144 #5 ↔ Lateral L-48 #6')
  })

  it('when slots are tapped in any order, then open carries each slot number', async () => {
    const wrapper = list({ activeSlot: 4 })
    for (const slot of [7, 1, 4]) await wrapper.find(`li[data-slot="${slot}"] button`).trigger('click')
    expect(wrapper.emitted('open')).toEqual([[7], [1], [4]])
    expect(wrapper.find('li[data-slot="4"] button').attributes('aria-current')).toBe('step')
  })

  it('when the tray has 144 slots, then 144 rows render and a new splice updates its row', async () => {
    const big = buildTray({ capacity: 144 })
    const fullPlan = Array.from({ length: 144 }, (_, i) =>
      buildPlanRow({ id: testId(1000 + i), slot: i + 1, fiberA: i + 1, fiberB: (i % 48) + 1 }),
    )
    const wrapper = list({ tray: big, plan: fullPlan, splices: [] })
    // The first screen renders at once; the rest follows a chunk per animation frame.
    expect(wrapper.findAll('li').length).toBeLessThan(144)
    await vi.waitFor(() => expect(wrapper.findAll('li')).toHaveLength(144), { timeout: 15_000 })
    expect(wrapper.findAll('li[data-state="todo"]')).toHaveLength(144)
    const logged = buildSplice({ id: testId(5000), slot: 100, fiberA: 100, fiberB: 4, lossDb: 0.01 })
    await wrapper.setProps({ splices: [logged] })
    expect(wrapper.find('li[data-slot="100"]').attributes('data-state')).toBe('logged')
    expect(words(wrapper.find('li[data-slot="100"] .ls-state').text())).toBe('0.01 dB')

    // Another tray starts again from the first screen and fills in the same way.
    await wrapper.setProps({ tray: buildTray({ id: ids.tray2, number: 2, capacity: 72 }), plan: [] })
    await vi.waitFor(() => expect(wrapper.findAll('li')).toHaveLength(72), { timeout: 15_000 })
    expect(wrapper.findAll('li[data-state="unplanned"]')).toHaveLength(72)
  }, 30_000)
})
