import { ref } from 'vue'
import type { z } from 'zod'
import { ApiError, failureMessage } from '@/api/http'

import type { FormProblems } from '@/components/office/officeWords'

function detailsByPath(details: unknown): Record<string, string> {
  const fields: Record<string, string> = {}
  if (!Array.isArray(details)) return fields
  for (const item of details as Array<{ path?: unknown; field?: unknown; message?: unknown }>) {
    const path =
      typeof item.path === 'string' ? item.path : typeof item.field === 'string' ? item.field : null
    if (path !== null && typeof item.message === 'string') fields[path] ??= item.message
  }
  return fields
}

/**
 * Checks a draft with the shared schema, then sends it; problems from either side land next to their
 * field. The draft itself is never touched, so nothing typed is lost when a save is refused.
 */
export function useSave() {
  const saving = ref(false)
  const problems = ref<FormProblems>({ message: null, fields: {} })

  async function save<S extends z.ZodType, T>(
    schema: S | null,
    draft: unknown,
    send: (valid: z.infer<S>) => Promise<T>,
  ): Promise<T | null> {
    problems.value = { message: null, fields: {} }
    let valid: z.infer<S> = draft as z.infer<S>
    if (schema) {
      const checked = schema.safeParse(draft)
      if (!checked.success) {
        const fields: Record<string, string> = {}
        for (const issue of checked.error.issues) fields[issue.path.map(String).join('.')] ??= issue.message
        problems.value = { message: 'Some fields need attention; nothing was saved.', fields }
        return null
      }
      valid = checked.data
    }
    saving.value = true
    try {
      return await send(valid)
    } catch (error) {
      const fields = error instanceof ApiError ? detailsByPath(error.details) : {}
      problems.value = { message: `${failureMessage(error)} Nothing was saved.`, fields }
      return null
    } finally {
      saving.value = false
    }
  }

  return { saving, problems, save }
}
