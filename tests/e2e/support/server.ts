import { type ChildProcess, spawn } from 'node:child_process'
import { mkdtempSync, rmSync } from 'node:fs'
import { tmpdir } from 'node:os'
import { join } from 'node:path'

export interface RunningServer {
  url: string
  dataDir: string
  process: ChildProcess
  stop: () => Promise<void>
}

/** Starts the real server (`tsx server/index.ts`) on a free loopback port with a fresh data folder. */
export async function startServer(options: { env?: Record<string, string> } = {}): Promise<RunningServer> {
  const dataDir = mkdtempSync(join(tmpdir(), 'lightseam-e2e-'))
  const child = spawn('npx', ['tsx', 'server/index.ts', '--build-if-needed', '--seed-if-empty'], {
    env: {
      ...process.env,
      NODE_ENV: 'test',
      HOST: '127.0.0.1',
      PORT: '0',
      LIGHTSEAM_DATA_DIR: dataDir,
      LIGHTSEAM_BCRYPT_COST: '4',
      ...options.env,
    },
    stdio: ['ignore', 'pipe', 'pipe'],
    // Its own process group, so stop() ends npx and the tsx server under it together.
    detached: true,
  })
  let log = ''
  const url = await new Promise<string>((resolve, reject) => {
    const timer = setTimeout(() => reject(new Error(`server did not start in time:\n${log}`)), 200_000)
    const onData = (chunk: Buffer) => {
      log += chunk.toString()
      const match = /listening on (http:\/\/127\.0\.0\.1:\d+)/.exec(log)
      if (match?.[1]) {
        clearTimeout(timer)
        resolve(match[1])
      }
    }
    child.stdout?.on('data', onData)
    child.stderr?.on('data', onData)
    child.on('exit', (code) => {
      clearTimeout(timer)
      reject(new Error(`server exited with ${code}:\n${log}`))
    })
  })
  return {
    url,
    dataDir,
    process: child,
    async stop() {
      if (child.exitCode === null) {
        const exited = new Promise((resolve) => child.once('exit', resolve))
        // Killing npx alone leaves the tsx server running; the whole group goes.
        if (child.pid) process.kill(-child.pid, 'SIGTERM')
        else child.kill('SIGTERM')
        await exited
      }
      rmSync(dataDir, { recursive: true, force: true })
    },
  }
}
