import { mount, type VueWrapper } from '@vue/test-utils'
import fc from 'fast-check'
import { describe, expect, it } from 'vitest'
import { nextTick } from 'vue'
import { lossDbSchema } from '#shared/schemas/common'
import { defaultProjectLimits } from '#shared/schemas/project'
import LossPad from '@/components/splice/LossPad.vue'
import { words, withQuasar } from './support/quasar'

// REFERENCE.md §2: contract target 0.10 dB, standard maximum 0.3 dB (TIA-568.3-D, from memory).
const limits = { standardMaxDb: 0.3, contractTargetDb: 0.1 }

function pad(props: Record<string, unknown> = {}) {
  const wrapper: VueWrapper = mount(LossPad, {
    props: {
      modelValue: null,
      limits,
      'onUpdate:modelValue': (value: number | null) => wrapper.setProps({ modelValue: value }),
      ...props,
    },
    global: withQuasar,
  })
  return wrapper
}

async function type(wrapper: VueWrapper, keys: string) {
  for (const key of keys) await wrapper.trigger('keydown', { key })
}

const model = (wrapper: VueWrapper) => (wrapper.props() as { modelValue: number | null }).modelValue
const shown = (wrapper: VueWrapper) => wrapper.find('[data-testid=loss-display]')
const status = (wrapper: VueWrapper) => wrapper.find('[role=status]')
const lastValue = (wrapper: VueWrapper) => wrapper.emitted<[number | null]>('update:modelValue')?.at(-1)?.[0]

describe('LossPad', () => {
  it('when 0.03 is tapped in, then the value is 0.03 and the display shows three decimals', async () => {
    const wrapper = pad()
    for (const key of ['0', '.', '0', '3']) await wrapper.find(`[data-key="${key}"]`).trigger('click')
    expect(lastValue(wrapper)).toBe(0.03)
    expect(shown(wrapper).text()).toMatch(/^0\.030\s*dB$/)
    expect(shown(wrapper).attributes('aria-label')).toBe('0.030 dB')
  })

  it('when the pad is shown, then there is no text field (the system keyboard never opens)', () => {
    const wrapper = pad()
    expect(wrapper.find('input').exists()).toBe(false)
    expect(wrapper.find('textarea').exists()).toBe(false)
    expect(wrapper.findAll('button').every((button) => button.attributes('aria-label'))).toBe(true)
  })

  it('when a fourth decimal or a value above 10 dB is typed, then the key is refused and the value kept', async () => {
    const wrapper = pad()
    await type(wrapper, '0.0301')
    expect(lastValue(wrapper)).toBe(0.03)
    expect(wrapper.find('[role=alert]').text()).toContain('3 decimals')
    await wrapper.find('[data-key=clear]').trigger('click')
    await type(wrapper, '11')
    expect(lastValue(wrapper)).toBe(1)
    expect(wrapper.find('[role=alert]').text()).toContain('10 dB')
  })

  it('when ± is pressed, then a gainer reading can be entered down to −1 dB and no further', async () => {
    const wrapper = pad()
    await wrapper.find('[data-key=sign]').trigger('click')
    await type(wrapper, '0.05')
    expect(lastValue(wrapper)).toBe(-0.05)
    expect(shown(wrapper).text()).toContain('−0.050')
    await wrapper.find('[data-key=clear]').trigger('click')
    await type(wrapper, '2-')
    expect(lastValue(wrapper)).toBe(2)
    expect(wrapper.find('[role=alert]').exists()).toBe(true)
  })

  it('when a quick key is tapped, then the value is set at once; Backspace edits it', async () => {
    const wrapper = pad()
    await wrapper.find('[data-key="quick-0.02"]').trigger('click')
    expect(lastValue(wrapper)).toBe(0.02)
    await wrapper.trigger('keydown', { key: 'Backspace' })
    await wrapper.trigger('keydown', { key: '5' })
    expect(lastValue(wrapper)).toBe(0.05)
  })

  it('when any key sequence is typed, then the value stays null or a valid loss (−1..10 dB, ≤ 3 decimals)', async () => {
    // Digits dominate so that long numbers (and attempts at a fourth decimal) come up often.
    const wrapper = pad()
    const key = fc.oneof(
      { arbitrary: fc.constantFrom(...'0123456789'), weight: 8 },
      { arbitrary: fc.constantFrom('.', ',', '-', '+'), weight: 2 },
      { arbitrary: fc.constantFrom('Backspace', 'Delete', 'x', 'Enter'), weight: 1 },
    )
    await fc.assert(
      fc.asyncProperty(fc.array(key, { maxLength: 24, size: 'max' }), async (sequence) => {
        await wrapper.trigger('keydown', { key: 'Delete' })
        for (const typed of sequence) {
          await wrapper.trigger('keydown', { key: typed })
          const value = model(wrapper)
          if (value === null) continue
          expect(lossDbSchema.safeParse(value).success, `${value} after ${sequence.join(' ')}`).toBe(true)
          expect(Math.abs(value * 1000 - Math.round(value * 1000))).toBeLessThan(1e-6)
          expect(shown(wrapper).attributes('aria-label')).toBe(`${value.toFixed(3)} dB`)
        }
      }),
      { numRuns: 200 },
    )
    wrapper.unmount()
  }, 30_000)

  it('when 0.101 is typed against a 0.10 target, then it warns over target at once; 0.100 is on target', async () => {
    // Common practice / REFERENCE.md §2: above the 0.10 dB contract target (beyond the 5e-4 tolerance) warns.
    const wrapper = pad()
    await type(wrapper, '0.100')
    expect(status(wrapper).attributes('data-status')).toBe('ok')
    expect(status(wrapper).text()).toContain('On target')
    expect(status(wrapper).classes()).toContain('ls-state--ok')
    await wrapper.trigger('keydown', { key: 'Backspace' })
    await wrapper.trigger('keydown', { key: '1' })
    expect(lastValue(wrapper)).toBe(0.101)
    expect(status(wrapper).attributes('data-status')).toBe('over_target')
    expect(words(status(wrapper).text())).toContain('Over target 0.10 dB')
    expect(status(wrapper).find('svg').exists()).toBe(true)
  })

  it('when the reading passes the standard maximum, then it says over maximum in words', async () => {
    const wrapper = pad()
    await type(wrapper, '0.301')
    expect(status(wrapper).attributes('data-status')).toBe('over_maximum')
    expect(words(status(wrapper).text())).toContain('Over maximum 0.30 dB')
  })

  it('when the last allowed attempt is over target, then it offers accepting with a reason', async () => {
    const wrapper = pad({ attempt: defaultProjectLimits.attemptsBeforeAcceptWithFlag })
    await type(wrapper, '0.15')
    expect(status(wrapper).text()).toContain('accept with a reason')
  })

  it('when Enter is pressed, then submit carries the value', async () => {
    const wrapper = pad()
    await type(wrapper, '0.02')
    await wrapper.trigger('keydown', { key: 'Enter' })
    expect(wrapper.emitted('submit')).toEqual([[0.02]])
  })

  it('when the parent sets a value, then the pad shows it and typing continues from it', async () => {
    const wrapper = pad()
    await wrapper.setProps({ modelValue: 0.04 })
    await nextTick()
    expect(shown(wrapper).text()).toMatch(/^0\.040/)
    await wrapper.trigger('keydown', { key: '5' })
    expect(lastValue(wrapper)).toBe(0.045)
    await wrapper.setProps({ modelValue: null })
    expect(shown(wrapper).attributes('aria-label')).toBe('No reading')
    expect(status(wrapper).attributes('data-status')).toBe('no_reading')
  })
})
