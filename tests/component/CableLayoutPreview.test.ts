import { mount } from '@vue/test-utils'
import { describe, expect, it } from 'vitest'
import CableLayoutPreview from '@/components/office/CableLayoutPreview.vue'
import { withQuasar } from './support/quasar'

// REFERENCE.md §1 (TIA-598-C as summarised in its public encyclopedia entry): tubes and fibers follow
// Blue, Orange, Green, Brown, Slate, White, Red, Black, Yellow, Violet, Rose, Aqua; 13–24 add a black tracer.

const base = { colourScheme: 'tia598' as const, unitCounts: null, ribbonsPerTube: null }

function render(layout: Record<string, unknown>) {
  return mount(CableLayoutPreview, { props: { layout: { ...base, ...layout } as never }, global: withQuasar })
}

describe('CableLayoutPreview', () => {
  it('when a 24-fiber cable has tubes of 6, then it shows 4 tubes Blue to Brown with fibers Blue to White', () => {
    const wrapper = render({ fiberCount: 24, construction: 'loose_tube', fibersPerUnit: 6 })
    const units = wrapper.findAll('[data-unit]')
    expect(units).toHaveLength(4)
    expect(units.map((u) => u.find('[aria-label^="Tube"]').attributes('aria-label'))).toEqual([
      'Tube 1: blue',
      'Tube 2: orange',
      'Tube 3: green',
      'Tube 4: brown',
    ])
    const fibers = units[1]!.findAll('[aria-label^="Fiber"]').map((f) => f.attributes('aria-label'))
    expect(fibers).toEqual([
      'Fiber 7: blue',
      'Fiber 8: orange',
      'Fiber 9: green',
      'Fiber 10: brown',
      'Fiber 11: slate',
      'Fiber 12: white',
    ])
    expect(wrapper.get('[data-testid=preview-summary]').text()).toBe('24 fibers in 4 buffer tubes.')
  })

  it('when the tube count passes 12, then tube 13 is blue with a black tracer', () => {
    const wrapper = render({ fiberCount: 156, construction: 'loose_tube', fibersPerUnit: 12 })
    expect(wrapper.get('[data-unit=t13] [aria-label^="Tube"]').attributes('aria-label')).toBe(
      'Tube 13: blue with black tracer',
    )
  })

  it('when per-tube counts differ, then each tube shows its own number of fibers', () => {
    const wrapper = render({
      fiberCount: 30,
      construction: 'loose_tube',
      fibersPerUnit: 12,
      unitCounts: [12, 12, 6],
    })
    expect(wrapper.findAll('[data-unit]').map((u) => u.findAll('[aria-label^="Fiber"]').length)).toEqual([
      12, 12, 6,
    ])
  })

  it('when the layout changes, then the preview follows it', async () => {
    const wrapper = render({ fiberCount: 24, construction: 'loose_tube', fibersPerUnit: 12 })
    expect(wrapper.findAll('[data-unit]')).toHaveLength(2)
    await wrapper.setProps({ layout: { ...base, fiberCount: 48, construction: 'ribbon', fibersPerUnit: 12 } })
    expect(wrapper.findAll('[data-unit]')).toHaveLength(4)
    expect(wrapper.text()).toContain('Ribbon 4')
  })

  it('when the fibers do not fill the tubes, then the problem is shown instead of a layout', () => {
    const wrapper = render({ fiberCount: 30, construction: 'loose_tube', fibersPerUnit: 12 })
    expect(wrapper.find('[data-unit]').exists()).toBe(false)
    expect(wrapper.get('[data-testid=preview-problems]').text()).toContain(
      '30 fibers do not fill tubes of 12 evenly',
    )
  })
})
