import { type ChildProcess, spawn } from 'node:child_process'
import { fileURLToPath } from 'node:url'

// The real server as a child process, started on a given data folder so a test can kill it and start it
// again on the same SQLite file. `node --import tsx server/index.ts` is what `npx tsx server/index.ts` runs,
// without npm's launcher in front (about 0.8 s a start here, which a test that restarts 21 times feels).

const root = fileURLToPath(new URL('../../..', import.meta.url))

export interface ChildServer {
  url: string
  process: ChildProcess
  /** Everything the child printed on stdout so far. */
  stdout: () => string
  /** Resolves when stdout has printed a line matching `pattern`. */
  waitForOutput: (pattern: RegExp, timeoutMs?: number) => Promise<void>
  /** SIGKILL to the child's whole process group, then waits for it to exit. */
  kill: () => Promise<void>
  /** SIGTERM, for a graceful stop. */
  stop: () => Promise<void>
}

/** Starts `server/index.ts --seed-if-empty` under tsx in its own process group and waits until it listens. */
export async function startChildServer(
  dataDir: string,
  env: Record<string, string> = {},
): Promise<ChildServer> {
  const child = spawn(process.execPath, ['--import', 'tsx', 'server/index.ts', '--seed-if-empty'], {
    cwd: root,
    env: {
      ...process.env,
      NODE_ENV: 'test',
      HOST: '127.0.0.1',
      PORT: '0',
      LIGHTSEAM_DATA_DIR: dataDir,
      LIGHTSEAM_BCRYPT_COST: '4',
      ...env,
    },
    stdio: ['ignore', 'pipe', 'pipe'],
    // A group of its own, so one signal reaches the server and anything it started.
    detached: true,
  })
  let out = ''
  let err = ''
  const waiters = new Set<() => void>()
  child.stdout?.on('data', (chunk: Buffer) => {
    out += chunk.toString()
    for (const check of waiters) check()
  })
  child.stderr?.on('data', (chunk: Buffer) => {
    err += chunk.toString()
    for (const check of waiters) check()
  })
  const exited = new Promise<void>((resolve) => child.once('exit', () => resolve()))
  const waitFor = (test: () => boolean, what: string, timeoutMs: number) =>
    new Promise<void>((resolve, reject) => {
      const check = () => {
        if (!test()) return
        waiters.delete(check)
        clearTimeout(timer)
        resolve()
      }
      const timer = setTimeout(() => {
        waiters.delete(check)
        reject(new Error(`server: no ${what} within ${timeoutMs} ms\n${out}\n${err}`))
      }, timeoutMs)
      waiters.add(check)
      void exited.then(() => {
        if (waiters.has(check)) {
          waiters.delete(check)
          clearTimeout(timer)
          reject(new Error(`server exited before ${what}:\n${out}\n${err}`))
        }
      })
      check()
    })
  const signal = async (name: NodeJS.Signals) => {
    if (child.exitCode !== null || child.signalCode !== null) return
    try {
      process.kill(-child.pid!, name)
    } catch {
      // Already gone.
    }
    await exited
  }
  await waitFor(() => /listening on http:\/\/127\.0\.0\.1:\d+/.test(err + out), 'listening line', 60_000)
  const url = /listening on (http:\/\/127\.0\.0\.1:\d+)/.exec(err + out)![1]!
  return {
    url,
    process: child,
    stdout: () => out,
    waitForOutput: (pattern, timeoutMs = 20_000) =>
      waitFor(() => pattern.test(out), String(pattern), timeoutMs),
    kill: () => signal('SIGKILL'),
    stop: () => signal('SIGTERM'),
  }
}
