import { mount } from '@vue/test-utils'
import { describe, expect, it } from 'vitest'
import { colours, positionMarking } from '#shared/domain/colour'
import FiberSwatch from '@/components/fiber/FiberSwatch.vue'
import { withQuasar } from './support/quasar'

// REFERENCE.md §1, from TIA-598-C (as summarised in its public encyclopedia entry): positions 1–12 in
// this order; 13–24 repeat them with a black tracer, except 20 (black) with a yellow tracer; 25–36
// carry a double tracer (the "one more per group" rule comes from the same summary).
const sequence = [
  'Blue',
  'Orange',
  'Green',
  'Brown',
  'Slate',
  'White',
  'Red',
  'Black',
  'Yellow',
  'Violet',
  'Rose',
  'Aqua',
]

function expected(position: number) {
  const base = sequence[(position - 1) % 12]!
  const group = Math.floor((position - 1) / 12)
  const tracer = group === 0 ? null : base === 'Black' ? 'Yellow' : 'Black'
  const label = tracer === null ? base : `${base}/${tracer}${group > 1 ? '×2' : ''}`
  const lower = (word: string) => word.toLowerCase()
  const spoken =
    tracer === null
      ? lower(base)
      : `${lower(base)} with ${group > 1 ? 'two ' : ''}${lower(tracer)} tracer${group > 1 ? 's' : ''}`
  return { base, tracer, tracerCount: group, label, spoken }
}

function render(position: number, extra: Record<string, unknown> = {}) {
  return mount(FiberSwatch, {
    props: { marking: positionMarking(position), number: position, kind: 'tube', ...extra },
    global: withQuasar,
  })
}

describe('FiberSwatch', () => {
  it.each(Array.from({ length: 36 }, (_, i) => i + 1))(
    'when position %i is drawn, then base, tracer, label and spoken name follow REFERENCE.md §1',
    (position) => {
      const want = expected(position)
      const swatch = render(position)
      expect(swatch.attributes('role')).toBe('img')
      expect(swatch.attributes('aria-label')).toBe(`Tube ${position}: ${want.spoken}`)
      expect(swatch.attributes('data-base')).toBe(want.base.toLowerCase())
      expect(swatch.attributes('data-tracer')).toBe(want.tracer?.toLowerCase() ?? '')
      expect(swatch.attributes('data-tracer-count')).toBe(String(want.tracerCount))
      expect(swatch.find('.ls-swatch__name').text()).toBe(want.label)
      expect(swatch.find('.ls-swatch__number').text()).toBe(String(position))

      const fill = swatch.find('.ls-swatch__chip').attributes('style') ?? ''
      const baseHex = colours[want.base.toLowerCase() as keyof typeof colours].hex
      expect(fill).toContain(baseHex)
      if (want.tracer === null) {
        expect(fill).not.toContain('gradient')
      } else {
        // One diagonal band of the tracer colour per tracer: each band has two stops.
        const tracerHex = colours[want.tracer.toLowerCase() as keyof typeof colours].hex
        expect(fill.split(tracerHex).length - 1).toBe(2 * want.tracerCount)
      }
    },
  )

  it('when positions 13, 20 and 25 are drawn, then they read Blue/Black, Black/Yellow and Blue/Black×2', () => {
    // REFERENCE.md §1 (TIA-598-C summary): 13 blue with black tracer, 20 black with yellow tracer,
    // 25 blue with a double black tracer.
    expect(render(13).attributes('aria-label')).toBe('Tube 13: blue with black tracer')
    expect(render(20).find('.ls-swatch__name').text()).toBe('Black/Yellow')
    expect(render(20).attributes('aria-label')).toBe('Tube 20: black with yellow tracer')
    expect(render(25).attributes('aria-label')).toBe('Tube 25: blue with two black tracers')
  })

  it('when asked for the abbreviation without a number, then it shows the short form and names the colour alone', () => {
    const swatch = mount(FiberSwatch, {
      props: { marking: positionMarking(14), label: 'abbreviation', size: 'sm' },
      global: withQuasar,
    })
    expect(swatch.find('.ls-swatch__name').text()).toBe('OR/BK')
    expect(swatch.find('.ls-swatch__number').exists()).toBe(false)
    expect(swatch.attributes('aria-label')).toBe('Orange with black tracer')
    expect(swatch.classes()).toContain('ls-swatch--sm')
  })

  it('when the label is turned off, then only the colour chip is drawn and it is still named', () => {
    const swatch = mount(FiberSwatch, {
      props: { marking: positionMarking(6), label: 'none', kind: 'fiber' },
      global: withQuasar,
    })
    expect(swatch.find('.ls-swatch__name').exists()).toBe(false)
    expect(swatch.attributes('aria-label')).toBe('White')
  })
})
