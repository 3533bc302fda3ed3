import { type AddressInfo, createServer, Socket } from 'node:net'

/**
 * A loopback TCP proxy in front of the server that can turn into a network that connects but never answers,
 * as a phone with signal bars and no data does in a vault: `stall()` drops the connections it carries and
 * from then on accepts new ones and holds them, unanswered, until `flow()` or `close()`.
 */
export interface StallingProxy {
  url: string
  stall: () => void
  flow: () => void
  close: () => Promise<void>
}

export async function startStallingProxy(target: string): Promise<StallingProxy> {
  const { hostname, port } = new URL(target)
  const sockets = new Set<Socket>()
  let stalled = false
  const proxy = createServer((client) => {
    sockets.add(client)
    client.once('close', () => sockets.delete(client))
    client.on('error', () => client.destroy())
    // Held: the bytes the browser sends are read and ignored, and nothing ever comes back.
    if (stalled) return void client.resume()
    const upstream = new Socket()
    sockets.add(upstream)
    upstream.once('close', () => {
      sockets.delete(upstream)
      client.destroy()
    })
    upstream.on('error', () => upstream.destroy())
    client.once('close', () => upstream.destroy())
    upstream.connect(Number(port), hostname, () => {
      client.pipe(upstream)
      upstream.pipe(client)
    })
  })
  await new Promise<void>((resolve) => proxy.listen(0, '127.0.0.1', resolve))
  const { port: own } = proxy.address() as AddressInfo
  return {
    url: `http://127.0.0.1:${own}`,
    stall() {
      stalled = true
      for (const socket of sockets) socket.destroy()
    },
    flow() {
      stalled = false
      for (const socket of sockets) socket.destroy()
    },
    async close() {
      for (const socket of sockets) socket.destroy()
      await new Promise<void>((resolve) => proxy.close(() => resolve()))
    },
  }
}
