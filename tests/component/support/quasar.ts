import type { mount } from '@vue/test-utils'
import { Quasar } from 'quasar'
import { quasarOptions } from '../../../quasar.config'

/** Mount options that install Quasar as src/main.ts does. */
export const withQuasar: NonNullable<Parameters<typeof mount>[1]>['global'] = {
  plugins: [[Quasar, quasarOptions]],
}

/** Text as a person reads it: no-break spaces (kept between a value and its unit) count as spaces. */
export function words(text: string): string {
  return text.replace(/\u00a0/g, ' ')
}
