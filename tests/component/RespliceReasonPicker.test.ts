import { enableAutoUnmount, mount, type VueWrapper } from '@vue/test-utils'
import { afterEach, describe, expect, it, vi } from 'vitest'
import { respliceReasons } from '#shared/schemas/enums'
import RespliceReasonPicker from '@/components/splice/RespliceReasonPicker.vue'
import { respliceChoiceProblem, type RespliceChoice } from '@/components/splice/respliceChoice'
import { withQuasar } from './support/quasar'

function picker(modelValue: RespliceChoice, props: Record<string, unknown> = {}) {
  const wrapper: VueWrapper = mount(RespliceReasonPicker, {
    // Attached, so focus and blur reach the note field as they do in a page.
    attachTo: document.body,
    props: {
      modelValue,
      'onUpdate:modelValue': (value: RespliceChoice) => wrapper.setProps({ modelValue: value }),
      ...props,
    },
    global: withQuasar,
  })
  return wrapper
}

const model = (wrapper: VueWrapper) => (wrapper.props() as { modelValue: RespliceChoice }).modelValue
const note = (wrapper: VueWrapper) => wrapper.find('textarea[data-testid=resplice-note]')

enableAutoUnmount(afterEach)

describe('RespliceReasonPicker', () => {
  it('when shown, then every shared re-splice reason is offered with words of its own', () => {
    const wrapper = picker({ reason: null, note: '' })
    const options = wrapper.findAll('[data-reason]')
    expect(options.map((option) => option.attributes('data-reason'))).toEqual([...respliceReasons])
    expect(options.every((option) => option.text().length > 3)).toBe(true)
    expect(wrapper.find('[data-reason=fiber_break]').text()).toBe('Fiber broke at proof test or heat-shrink')
    expect(wrapper.find('legend').text()).toBe('Why make this splice again?')
  })

  it('when a reason is picked and a note typed, then v-model carries both', async () => {
    const wrapper = picker({ reason: null, note: '' })
    await wrapper.find('input[value=bad_cleave]').setValue(true)
    expect(model(wrapper)).toEqual({ reason: 'bad_cleave', note: '' })
    await note(wrapper).setValue('Lip on the B side')
    expect(model(wrapper)).toEqual({ reason: 'bad_cleave', note: 'Lip on the B side' })
    expect(wrapper.find('[data-reason=bad_cleave]').classes()).toContain('ls-reason--on')
  })

  it('when Other is picked without a note, then a note is required before it can be saved', async () => {
    const wrapper = picker({ reason: 'other', note: '' })
    expect(wrapper.text()).toContain('What happened (required)')
    expect(respliceChoiceProblem(model(wrapper))).toMatch(/note is needed/)
    expect(note(wrapper).attributes('aria-invalid')).not.toBe('true')

    // QInput reports blur from a focusout timer (setTimeout 0), and only after a real focus.
    const textarea = note(wrapper).element as HTMLTextAreaElement
    textarea.focus()
    textarea.blur()
    await vi.waitFor(() => expect(note(wrapper).attributes('aria-invalid')).toBe('true'))
    expect(wrapper.text()).toContain('a note is needed for "Other"')

    await note(wrapper).setValue('   ')
    expect(respliceChoiceProblem(model(wrapper))).not.toBeNull()
    await note(wrapper).setValue('Splice protector cracked')
    expect(respliceChoiceProblem(model(wrapper))).toBeNull()
    expect(note(wrapper).attributes('aria-invalid')).not.toBe('true')
  })

  it('when a listed reason has no note, then nothing is missing; with no reason and showErrors, it asks for one', () => {
    expect(respliceChoiceProblem({ reason: 'bubble', note: '' })).toBeNull()
    const wrapper = picker({ reason: null, note: '' }, { showErrors: true })
    expect(wrapper.find('[role=alert]').text()).toContain('Pick why the splice is being made again')
    expect(wrapper.find('fieldset').attributes('aria-describedby')).toBeTruthy()
  })
})
