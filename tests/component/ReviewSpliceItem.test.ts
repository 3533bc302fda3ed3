import { enableAutoUnmount, mount } from '@vue/test-utils'
import { afterEach, describe, expect, it } from 'vitest'
import { reviewItems, signOffChecklist, type ReviewedSplice } from '#shared/domain/review'
import { defaultProjectLimits } from '#shared/schemas/project'
import ClosureSignOff from '@/components/review/ClosureSignOff.vue'
import ReviewSpliceItem from '@/components/review/ReviewSpliceItem.vue'
import { buildCable, buildPlanRow, buildSplice, ids } from '../unit/shared/builders'
import { withQuasar, words } from './support/quasar'

enableAutoUnmount(afterEach)

const plan = [buildPlanRow()]
const cables = {
  [ids.cableA]: buildCable(),
  [ids.cableB]: buildCable({ id: ids.cableB, label: 'Drop D-12' }),
}
const flagged = (lossDb: number): ReviewedSplice => ({ ...buildSplice({ lossDb }), reviewState: null })

function itemFor(lossDb: number) {
  const [item] = reviewItems(plan, [flagged(lossDb)], defaultProjectLimits)
  return mount(ReviewSpliceItem, {
    props: {
      item: item!,
      trayNumber: 1,
      cables,
      splicerName: 'Maren Oduya',
      notes: ['Tight bend.'],
      photos: [],
      editable: true,
    },
    global: withQuasar,
  })
}

describe('ReviewSpliceItem', () => {
  it('when no reason is typed, then neither verdict can be given; with one, accept emits it trimmed', async () => {
    const wrapper = itemFor(0.117)
    expect(words(wrapper.text())).toContain('0.117 dB est. · attempt 1 · Maren Oduya')
    expect(wrapper.text()).toContain('Waiting for your review.')
    expect(wrapper.get('[data-testid=accept]').attributes('disabled')).toBeDefined()
    expect(wrapper.get('[data-testid=send-back]').attributes('disabled')).toBeDefined()
    await wrapper.get('textarea[data-testid=review-reason]').setValue('  OTDR to confirm.  ')
    expect(wrapper.get('[data-testid=accept]').attributes('disabled')).toBeUndefined()
    await wrapper.get('[data-testid=accept]').trigger('click')
    expect(wrapper.emitted('review')).toEqual([['accepted', 'OTDR to confirm.']])
  })

  it('when the splice is over the maximum, then only sending it back is offered', () => {
    const wrapper = itemFor(0.31)
    expect(wrapper.find('[data-testid=accept]').exists()).toBe(false)
    expect(wrapper.find('[data-testid=send-back]').exists()).toBe(true)
    expect(wrapper.text()).toContain('it must be made again')
  })
})

describe('ClosureSignOff', () => {
  it('when the checklist fails, then each item shows and sign-off stays shut', () => {
    const checklist = signOffChecklist(plan, [flagged(0.117)], defaultProjectLimits, {
      counts: {},
      rules: { perSplice: 'none', perTray: true, closedClosure: false },
    })
    const wrapper = mount(ClosureSignOff, {
      props: { checklist: checklist.items, ready: checklist.ok, signedOff: false, signedText: '' },
      global: withQuasar,
    })
    const states = wrapper
      .findAll('[data-check]')
      .map((li) => [li.attributes('data-check'), li.attributes('data-ok')])
    expect(states).toEqual([
      ['all_logged', 'true'],
      ['flags_resolved', 'false'],
      ['photos', 'false'],
    ])
    expect(wrapper.text()).toContain('1 splice waiting for review.')
    expect(wrapper.text()).toContain('Missing: 1 tray photo.')
    expect(wrapper.get('[data-testid=sign-off]').attributes('disabled')).toBeDefined()
  })

  it('when signed off, then a reopen needs a reason and emits it', async () => {
    const wrapper = mount(ClosureSignOff, {
      props: { checklist: [], ready: true, signedOff: true, signedText: 'Signed off by Ines' },
      global: withQuasar,
    })
    expect(wrapper.get('[data-testid=reopen]').attributes('disabled')).toBeDefined()
    await wrapper.get('textarea[data-testid=reopen-reason]').setValue('Slot 9 to re-make')
    await wrapper.get('[data-testid=reopen]').trigger('click')
    expect(wrapper.emitted('reopen')).toEqual([['Slot 9 to re-make']])
  })
})
