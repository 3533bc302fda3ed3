import { matBackspace } from '@quasar/extras/material-icons'

// Keystroke rules of the loss pad. The text being typed is the state ('0.' and '-' are valid on the
// way to a number); every accepted text parses to null or to a value lossDbSchema accepts.

/** The range and precision of a loss reading, as shared/schemas/common.ts lossDbSchema sets them. */
export const lossEntryRange = { minDb: -1, maxDb: 10, decimals: 3 } as const

export const padDigits = ['1', '2', '3', '4', '5', '6', '7', '8', '9', '0'] as const
export type PadKey = (typeof padDigits)[number] | '.' | 'back' | 'clear' | 'sign'

export type KeyResult = { text: string } | { rejected: 'decimals' | 'range' }

/** Reads typed text as a loss in dB; null while nothing (or only a sign) has been typed. */
export function textToLoss(text: string): number | null {
  if (text === '' || text === '-') return null
  const value = Number(text)
  return value === 0 ? 0 : value
}

/** Writes a loss as text the pad can keep typing onto ('0.03', not '0.030'). */
export function lossToText(value: number | null): string {
  return value === null ? '' : String(Number(value.toFixed(lossEntryRange.decimals)))
}

function inRange(text: string): boolean {
  const value = textToLoss(text)
  return value === null || (value >= lossEntryRange.minDb && value <= lossEntryRange.maxDb)
}

function typeDigit(text: string, digit: string): KeyResult {
  const dot = text.indexOf('.')
  if (dot >= 0 && text.length - dot - 1 >= lossEntryRange.decimals) return { rejected: 'decimals' }
  // A lone leading zero is replaced, so '0' then '5' reads 5, not '05'.
  const next = text === '0' || text === '-0' ? text.slice(0, -1) + digit : text + digit
  return inRange(next) ? { text: next } : { rejected: 'range' }
}

/** Applies one pad key to the typed text, or says why the key was refused. */
export function pressKey(text: string, key: PadKey): KeyResult {
  switch (key) {
    case 'clear':
      return { text: '' }
    case 'back':
      return { text: text.slice(0, -1) }
    case '.':
      if (text.includes('.')) return { text }
      return { text: text === '' || text === '-' ? `${text}0.` : `${text}.` }
    case 'sign': {
      const next = text.startsWith('-') ? text.slice(1) : `-${text}`
      return inRange(next) ? { text: next } : { rejected: 'range' }
    }
    default:
      return typeDigit(text, key)
  }
}

/** Splits typed text for the display: what was typed, then placeholder decimals up to three. */
export function displayParts(text: string): { typed: string; ghost: string } {
  const typed = text.replace('-', '−')
  if (text === '' || text === '-') return { typed, ghost: '–.–––' }
  const dot = text.indexOf('.')
  const decimals = dot < 0 ? 0 : text.length - dot - 1
  return {
    typed,
    ghost: `${dot < 0 ? '.' : ''}${'0'.repeat(Math.max(0, lossEntryRange.decimals - decimals))}`,
  }
}

/** Maps a keyboard key to a pad key; null for keys the pad does not use. */
export function keyboardKey(key: string): PadKey | null {
  if ((padDigits as readonly string[]).includes(key)) return key as PadKey
  if (key === '.' || key === ',') return '.'
  if (key === '-' || key === '+') return 'sign'
  if (key === 'Backspace') return 'back'
  if (key === 'Delete') return 'clear'
  return null
}

/** Quick keys for the readings a good core-alignment splice gives (0.00–0.05 dB, common practice). */
export const quickValues = ['0.00', '0.01', '0.02', '0.03', '0.05'] as const

export type PadKeyDef = {
  key: PadKey
  text: string
  name: string
  area: string
  icon?: string
  tall?: boolean
}
const digitKey = (d: string, area: string): PadKeyDef => ({ key: d as PadKey, text: d, name: d, area })

/** The pad's keys with their grid areas: a phone layout, 1-2-3 on top, delete and clear down the right. */
export const padKeys: readonly PadKeyDef[] = [
  ...padDigits.slice(0, 9).map((d, i) => digitKey(d, `${Math.floor(i / 3) + 1} / ${(i % 3) + 1}`)),
  { key: 'sign', text: '±', name: 'Change sign (gainer reading)', area: '4 / 1' },
  digitKey('0', '4 / 2'),
  { key: '.', text: '.', name: 'Decimal point', area: '4 / 3' },
  { key: 'back', text: '', name: 'Delete last digit', area: '1 / 4 / 3 / 5', icon: matBackspace, tall: true },
  { key: 'clear', text: 'Clear', name: 'Clear the reading', area: '3 / 4 / 5 / 5', tall: true },
]
