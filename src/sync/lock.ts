/** The part of the Web Locks API the engine uses (navigator.locks). */
export interface LockManagerLike {
  request<T>(
    name: string,
    options: { ifAvailable: true },
    callback: (lock: unknown) => Promise<T>,
  ): Promise<T>
}

export type LockResult<T> = { acquired: true; value: T } | { acquired: false }

// Without Web Locks (old browsers, Node) the engines of one JavaScript realm share this set; tabs are then
// not coordinated, which is safe (the server dedupes by seq) but wasteful.
const heldLocally = new Set<string>()

/** Runs `fn` holding the named lock, or returns `{ acquired: false }` at once if someone else holds it. */
export async function withLock<T>(
  name: string,
  locks: LockManagerLike | null,
  fn: () => Promise<T>,
): Promise<LockResult<T>> {
  if (locks) {
    return locks.request(name, { ifAvailable: true }, async (lock): Promise<LockResult<T>> => {
      if (lock === null) return { acquired: false }
      return { acquired: true, value: await fn() }
    })
  }
  if (heldLocally.has(name)) return { acquired: false }
  heldLocally.add(name)
  try {
    return { acquired: true, value: await fn() }
  } finally {
    heldLocally.delete(name)
  }
}

/** The browser's Web Locks, when the runtime has them. */
export function defaultLocks(): LockManagerLike | null {
  const nav = (globalThis as { navigator?: { locks?: LockManagerLike } }).navigator
  return nav?.locks ?? null
}
