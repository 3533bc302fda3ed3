import { defineStore } from 'pinia'
import { computed, ref, shallowRef } from 'vue'
import { LocalStorage } from 'quasar'
import {
  refreshRequest,
  signInRequest,
  signOutRequest,
  type SessionAnswer,
  type SessionUser,
} from '@/api/auth'
import { queuedNow } from '@/boot/sync'

const userKey = 'ls.user'
const emailKey = 'ls.lastEmail'

/**
 * Runs `work` while holding the device-wide refresh lock, so two tabs never present the same refresh cookie
 * at once (the server takes a second use of a spent token for theft and ends the session). The cookie is
 * shared, so the tab that waits presents the one the first tab's refresh left behind.
 */
function acrossTabs<T>(work: () => Promise<T>): Promise<T> {
  if (typeof navigator === 'undefined' || !navigator.locks) return work()
  return navigator.locks.request('lightseam-refresh', work) as Promise<T>
}

/**
 * Who is signed in on this device. The access token lives in memory only; the user is remembered in
 * localStorage so the app opens offline showing who is signed in, and their device database with it.
 */
export const useSessionStore = defineStore('session', () => {
  const user = ref<SessionUser | null>(LocalStorage.getItem<SessionUser>(userKey))
  const accessToken = shallowRef<string | null>(null)
  /** The server refused the refresh token: work goes on locally, sync waits for a new sign-in. */
  const needsSignIn = ref(false)
  const lastEmail = ref(LocalStorage.getItem<string>(emailKey) ?? '')

  const signedIn = computed(() => user.value !== null)
  /** A sign-out waiting for the user to confirm it (queued work on the device); the layout shows it. */
  const signOutWarning = shallowRef<{ queued: number; answer: (go: boolean) => void } | null>(null)

  function adopt(answer: SessionAnswer) {
    accessToken.value = answer.accessToken
    user.value = answer.user
    needsSignIn.value = false
    lastEmail.value = answer.user.email
    LocalStorage.set(userKey, answer.user)
    LocalStorage.set(emailKey, answer.user.email)
  }

  async function signIn(email: string, password: string): Promise<void> {
    adopt(await signInRequest(email.trim(), password))
  }

  let refreshing: Promise<string | null> | null = null
  /**
   * Resolves the new token, null when the server refuses (sign in again); rejects when unreachable.
   * One request at a time: the refresh token rotates, and sending a spent one twice revokes the session.
   */
  function refresh(): Promise<string | null> {
    refreshing ??= acrossTabs(refreshOnce).finally(() => {
      refreshing = null
    })
    return refreshing
  }

  async function refreshOnce(): Promise<string | null> {
    const answer = await refreshRequest()
    // Refused, or another person's cookie: never mix their token with this user's device database.
    if (!answer || (user.value && answer.user.id !== user.value.id)) {
      accessToken.value = null
      needsSignIn.value = true
      return null
    }
    adopt(answer)
    return answer.accessToken
  }

  let restoring: Promise<void> | null = null
  /** On start: a remembered user gets a fresh token when the server is reachable; offline they just work. */
  function restore(): Promise<void> {
    restoring ??= user.value
      ? refresh().then(
          () => undefined,
          () => undefined,
        )
      : Promise.resolve()
    return restoring
  }

  /**
   * The access token to send, once the start-up refresh has settled: a request sent while it is still out
   * would only come back 401 and wait for that same refresh anyway.
   */
  async function currentToken(): Promise<string | null> {
    if (!accessToken.value) await restore()
    return accessToken.value
  }

  /** Signs out after a warning when edits still wait for the server; the device database is kept. */
  async function signOut(): Promise<boolean> {
    const queued = await queuedNow()
    if (queued > 0) {
      const go = await new Promise<boolean>((resolve) => {
        signOutWarning.value = {
          queued,
          answer: (choice) => {
            signOutWarning.value = null
            resolve(choice)
          },
        }
      })
      if (!go) return false
    }
    await signOutRequest().catch(() => undefined)
    accessToken.value = null
    user.value = null
    needsSignIn.value = false
    LocalStorage.remove(userKey)
    return true
  }

  return {
    user,
    accessToken,
    needsSignIn,
    lastEmail,
    signedIn,
    signOutWarning,
    signIn,
    refresh,
    restore,
    currentToken,
    signOut,
  }
})
