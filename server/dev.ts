import { spawn } from 'node:child_process'

// `npm run dev`: the API under tsx watch and the Vite dev server (which proxies /api to it), stopped together.
const children = [
  spawn('npx', ['tsx', 'watch', 'server/index.ts', '--seed-if-empty'], { stdio: 'inherit' }),
  spawn('npx', ['vite'], { stdio: 'inherit' }),
]
const stop = () => children.forEach((child) => child.kill('SIGTERM'))
process.on('SIGINT', stop)
process.on('SIGTERM', stop)
for (const child of children)
  child.on('exit', (code) => {
    stop()
    process.exitCode = code ?? 0
  })
