import { mount } from '@vue/test-utils'
import { describe, expect, it } from 'vitest'
import { nextTick, ref } from 'vue'
import SpliceSaveButton from '@/components/splice/SpliceSaveButton.vue'

describe('the splice panel Save button', () => {
  it('when the tray is saving, then it says so, refuses a second press and keeps its focus', async () => {
    const busy = ref(false)
    const wrapper = mount(SpliceSaveButton, {
      props: { label: 'Save splice', busy },
      attachTo: document.body,
    })
    const button = wrapper.get<HTMLButtonElement>('[data-testid=save-splice]')
    expect(button.text()).toBe('Save splice')
    await button.trigger('click')
    expect(wrapper.emitted('press')).toHaveLength(1)

    button.element.focus()
    busy.value = true
    await nextTick()
    expect(button.text()).toBe('Saving…')
    expect(button.attributes('aria-disabled')).toBe('true')
    expect(button.attributes('aria-busy')).toBe('true')
    // aria-disabled, not disabled: the focus stays where the splicer's finger left it.
    expect(button.element.disabled).toBe(false)
    expect(document.activeElement).toBe(button.element)
    await button.trigger('click')
    expect(wrapper.emitted('press')).toHaveLength(1)

    busy.value = false
    await nextTick()
    expect(button.attributes('aria-disabled')).toBeUndefined()
    await button.trigger('click')
    expect(wrapper.emitted('press')).toHaveLength(2)
    wrapper.unmount()
  })
})
