import { mount } from '@vue/test-utils'
import { describe, expect, it } from 'vitest'
import BaseField from '@/components/base/BaseField.vue'

describe('BaseField', () => {
  it('when shown, then its label names the input and the attributes given reach the input', () => {
    const wrapper = mount(BaseField, {
      props: { modelValue: 'maren@example.test', label: 'E-mail', type: 'email' },
      attrs: { 'data-testid': 'email', autocomplete: 'username', class: 'outer' },
    })
    const input = wrapper.get('input')
    expect(wrapper.get('label').attributes('for')).toBe(input.attributes('id'))
    expect(input.attributes()).toMatchObject({
      type: 'email',
      'data-testid': 'email',
      autocomplete: 'username',
    })
    expect(input.element.value).toBe('maren@example.test')
    expect(wrapper.classes()).toContain('outer')
    expect(input.classes()).not.toContain('outer')
  })

  it('when typed into, then it emits the text; when left, it says so', async () => {
    const wrapper = mount(BaseField, { props: { modelValue: '', label: 'Note' } })
    await wrapper.get('input').setValue('Tube 3 kinked')
    await wrapper.get('input').trigger('blur')
    expect(wrapper.emitted('update:modelValue')).toEqual([['Tube 3 kinked']])
    expect(wrapper.emitted('blur')).toHaveLength(1)
  })

  it('when there is a problem, then the field is marked invalid and the problem is read out below it', () => {
    const wrapper = mount(BaseField, {
      props: {
        modelValue: '',
        label: 'What happened',
        autogrow: true,
        error: 'Say what happened.',
        hint: 'Needed.',
      },
    })
    const area = wrapper.get('textarea')
    expect(area.attributes('aria-invalid')).toBe('true')
    const below = wrapper.get(`#${area.attributes('aria-describedby')}`)
    expect(below.text()).toBe('Say what happened.')
    expect(below.get('[role=alert]').text()).toBe('Say what happened.')
  })

  it('when a counter is asked for, then it shows the length against the limit and the limit holds', () => {
    const wrapper = mount(BaseField, {
      props: {
        modelValue: 'abc',
        label: 'Note',
        type: 'textarea',
        counter: true,
        maxlength: 500,
        hint: 'Optional.',
      },
    })
    expect(wrapper.get('textarea').attributes('maxlength')).toBe('500')
    expect(wrapper.get('.ls-field__counter').text()).toBe('3 / 500')
    expect(wrapper.get('.ls-field__hint').text()).toBe('Optional.')
  })
})
