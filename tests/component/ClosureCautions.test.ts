import { mount } from '@vue/test-utils'
import { describe, expect, it } from 'vitest'
import type { ClosureKind } from '#shared/schemas/enums'
import ClosureCautions from '@/components/closure/ClosureCautions.vue'
import { withQuasar } from './support/quasar'

const cautionsOf = (kind: ClosureKind, roadside = false) =>
  mount(ClosureCautions, { props: { kind, roadside }, global: withQuasar })
    .findAll('[data-caution]')
    .map((node) => node.attributes('data-caution'))

describe('ClosureCautions', () => {
  it('when the closure is a vault, then confined-space entry and gas testing are stated with laser safety', () => {
    const wrapper = mount(ClosureCautions, { props: { kind: 'vault', roadside: false }, global: withQuasar })
    expect(wrapper.text()).toContain('never look into a fiber end')
    expect(wrapper.text()).toContain('test the air for gas')
    expect(cautionsOf('vault')).toEqual(['confined-space'])
  })

  it('when the closure is aerial or at the roadside, then fall protection or traffic control is stated', () => {
    expect(cautionsOf('aerial')).toEqual(['fall-protection'])
    expect(cautionsOf('pedestal', true)).toEqual(['traffic'])
    expect(cautionsOf('handhole')).toEqual([])
  })
})
