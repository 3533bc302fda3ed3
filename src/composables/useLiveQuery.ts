import { liveQuery, type Subscription } from 'dexie'
import { onScopeDispose, shallowRef, watch, type ShallowRef, type WatchSource } from 'vue'

/**
 * Reads IndexedDB through Dexie's liveQuery: the ref follows the database, re-subscribing whenever a
 * dependency changes; the subscription ends with the calling scope.
 */
export function useLiveQuery<T>(
  querier: () => T | Promise<T>,
  deps: WatchSource[],
): { value: ShallowRef<T | undefined>; error: ShallowRef<unknown> } {
  const value = shallowRef<T | undefined>(undefined)
  const error = shallowRef<unknown>(null)
  let subscription: Subscription | null = null
  watch(
    deps,
    () => {
      subscription?.unsubscribe()
      subscription = liveQuery(querier).subscribe({
        next: (next) => {
          value.value = next
          error.value = null
        },
        error: (failure: unknown) => {
          error.value = failure
        },
      })
    },
    { immediate: true },
  )
  onScopeDispose(() => subscription?.unsubscribe())
  return { value, error }
}
