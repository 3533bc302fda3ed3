import { execFileSync } from 'node:child_process'
import { describe, expect, it } from 'vitest'
// Resolved by Vite's resolver (Vitest runs on it) and type-checked by vue-tsc through tsconfig.json.
import { probe } from '../fixtures/alias-probe'

const expected = { client: 500, shared: 4, db: 'object' }

describe('import aliases', () => {
  it('when imported under Vite/Vitest, then @/, #shared/ and #db/ resolve', () => {
    expect(probe).toEqual(expected)
  })

  it('when run by the server runtime (tsx on Node), then the same aliases resolve to the same modules', () => {
    const out = execFileSync('npx', ['tsx', 'tests/fixtures/alias-probe.ts', '--print'], { encoding: 'utf8' })
    expect(JSON.parse(out)).toEqual(expected)
  })
})
