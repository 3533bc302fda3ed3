import { mount } from '@vue/test-utils'
import { describe, expect, it } from 'vitest'
import FiberEnd from '@/components/fiber/FiberEnd.vue'
import { buildCable } from '../unit/shared/builders'
import { withQuasar } from './support/quasar'

function end(props: Partial<InstanceType<typeof FiberEnd>['$props']>) {
  return mount(FiberEnd, {
    props: { cable: buildCable(), fiber: 1, side: 'A' as const, ...props },
    global: withQuasar,
  })
}

describe('FiberEnd', () => {
  it('when fiber 145 of a 12-per-tube cable is shown, then it reads tube 13 blue/black, fiber 1 blue (REFERENCE.md §1)', () => {
    const view = end({ cable: buildCable({ fiberCount: 288, label: 'Feeder F-288' }), fiber: 145 })
    const [tube, fiber] = view.findAll('[role=img]')
    expect(tube!.attributes('aria-label')).toBe('Tube 13: blue with black tracer')
    expect(fiber!.attributes('aria-label')).toBe('Fiber 1: blue')
    expect(view.text()).toContain('Feeder F-288')
    expect(view.text()).toContain('Fiber 145')
    expect(view.attributes('aria-label')).toBe(
      'A side: Feeder F-288, fiber 145: tube 13 blue/black, fiber 1 blue',
    )
  })

  it('when a 6-per-tube cable is shown compact, then fiber 37 is tube 7 red, position 1 (REFERENCE.md §1)', () => {
    const view = end({
      cable: buildCable({ fibersPerUnit: 6, fiberCount: 48 }),
      fiber: 37,
      compact: true,
      side: 'B',
    })
    expect(view.attributes('data-side')).toBe('B')
    expect(view.findAll('[role=img]').map((img) => img.attributes('aria-label'))).toEqual([
      'Tube 7: red',
      'Fiber 1: blue',
    ])
    expect(view.text()).toContain('#37')
    expect(view.text()).toContain('RD')
  })

  it('when a ribbon cable is shown, then the ribbon number and the position colour are given', () => {
    const ribbon = buildCable({
      construction: 'ribbon',
      fibersPerUnit: 12,
      fiberCount: 864,
      ribbonsPerTube: 6,
    })
    const view = end({ cable: ribbon, fiber: 29 })
    expect(view.text()).toContain('Ribbon 3')
    expect(view.attributes('aria-label')).toContain('tube 1 blue, ribbon 3, position 5 slate')
  })

  it('when the fiber is beyond the cable or the cable is missing, then it says so instead of a colour', () => {
    expect(end({ fiber: 200 }).text()).toContain("beyond this cable's 144 fibers")
    expect(end({ cable: null }).text()).toContain('not on the device')
    expect(end({ cable: null }).findAll('[role=img]')).toHaveLength(0)
  })
})
