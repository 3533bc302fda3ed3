import { mount } from '@vue/test-utils'
import { describe, expect, it } from 'vitest'
import PlanProblemTable from '@/components/office/PlanProblemTable.vue'
import { withQuasar } from './support/quasar'

describe('PlanProblemTable', () => {
  it('when the server lists problems by row, then each is shown on its row with the line as written', () => {
    const lines = [
      'tray,slot,cable_a,fiber_a,cable_b,fiber_b',
      '1,1,A,1,B,1',
      '9,2,A,2,B,2',
      '1,x,A,3,NOPE,3',
    ]
    const problems = [
      { row: 3, field: 'tray', code: 'unknown_tray', message: 'The closure has no tray 9.' },
      { row: 4, field: 'slot', code: 'not_a_number', message: '"x" is not a whole number.' },
      {
        row: 4,
        field: 'cable_b',
        code: 'unknown_cable',
        message: 'No cable is labelled "NOPE" in this project.',
      },
    ]
    const wrapper = mount(PlanProblemTable, {
      props: { message: 'The plan has 3 problems; nothing was saved.', problems, lines },
      global: withQuasar,
    })
    expect(wrapper.get('[role=alert]').text()).toBe('The plan has 3 problems; nothing was saved.')
    const rows = wrapper.findAll('[data-testid=plan-problem]')
    expect(rows.map((r) => [r.attributes('data-row'), r.attributes('data-field')])).toEqual([
      ['3', 'tray'],
      ['4', 'slot'],
      ['4', 'cable_b'],
    ])
    expect(rows[0]!.text()).toContain('The closure has no tray 9.')
    expect(rows[0]!.text()).toContain('9,2,A,2,B,2')
    expect(rows[2]!.text()).toContain('1,x,A,3,NOPE,3')
  })

  it('when a refusal has no row details, then only the message is shown', () => {
    const wrapper = mount(PlanProblemTable, {
      props: { message: 'The file has no plan rows.', problems: [] },
      global: withQuasar,
    })
    expect(wrapper.text()).toContain('The file has no plan rows.')
    expect(wrapper.find('table').exists()).toBe(false)
  })
})
