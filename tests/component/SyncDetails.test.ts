import { mount } from '@vue/test-utils'
import { describe, expect, it } from 'vitest'
import { mutationNames } from '#shared/schemas/sync'
import SyncDetails from '@/components/sync/SyncDetails.vue'
import { changeName } from '@/components/sync/syncWords'
import { withQuasar } from './support/quasar'

const base = {
  summary: '1 refused',
  queued: 0,
  lastSyncAt: null,
  lastError: null,
  clockOffsetMs: null,
  syncing: false,
  signInNeeded: false,
}

describe('SyncDetails', () => {
  it('when changes were refused or replaced, then they are told in plain words with the reason', () => {
    const wrapper = mount(SyncDetails, {
      props: {
        ...base,
        rejected: [
          { seq: 4, name: 'createSplice', code: 'closure_locked', message: 'The closure is signed off.' },
        ],
        overwritten: [
          {
            seq: 5,
            overwritten: [{ field: 'lossDb', yours: 0.12, kept: 0.05, byName: 'Ines Barrowclough' }],
          },
        ],
      },
      global: withQuasar,
    })
    const text = wrapper.text()
    expect(text).toContain('Logged splice — The closure is signed off.')
    expect(text).not.toContain('createSplice')
    expect(text).toContain('Estimated loss: your value 0.12 was replaced by 0.05')
    expect(text).toContain('(by Ines Barrowclough)')
  })

  it('gives every kind of change its own words', () => {
    const words = mutationNames.map(changeName)
    expect(words.every((w, i) => w !== mutationNames[i])).toBe(true)
    expect(new Set(words).size).toBe(words.length)
  })

  it('when the phone clock is off by more than 5 minutes, then it says so', () => {
    const wrapper = mount(SyncDetails, {
      props: { ...base, clockOffsetMs: 9 * 60_000, rejected: [], overwritten: [] },
      global: withQuasar,
    })
    expect(wrapper.text()).toContain('9 min off')
  })
})
