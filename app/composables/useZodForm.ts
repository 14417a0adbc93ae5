import { computed, nextTick, reactive, ref, useId } from 'vue'
import type { z } from 'zod'
import { ApiError } from '@/api/http'

type Values<S extends z.ZodObject> = z.input<S>
type Field<S extends z.ZodObject> = Extract<keyof Values<S>, string>

interface Options<S extends z.ZodObject> {
  /** Receives the parsed (trimmed, defaulted) values. Throw an ApiError to show it on the form. */
  onSubmit: (data: z.output<S>) => Promise<unknown> | unknown
  /** Which field a server error belongs to, when the server does not say (a 409 on e-mail, say). */
  errorField?: (error: ApiError) => string | undefined
}

/** zod's messages are phrased to follow the field's label ("must not be empty"); shown alone they start upper-case. */
function sentence(message: string): string {
  return message.charAt(0).toUpperCase() + message.slice(1)
}

/**
 * A form validated with the same shared zod schema the server uses. A field's message shows after it
 * loses focus or after a submit; a server error naming a field shows under it until that field changes.
 */
export function useZodForm<S extends z.ZodObject>(schema: S, initial: () => Values<S>, options: Options<S>) {
  const formId = useId()
  const values = reactive(initial()) as Values<S>
  const touched = reactive(new Set<string>())
  const submitted = ref(false)
  const submitting = ref(false)
  const formError = ref<string | null>(null)
  // The value the field had when the server objected: the message goes once the user edits it.
  const serverErrors = reactive(new Map<string, { message: string; value: unknown }>())

  const parsed = computed(() => schema.safeParse(values))

  const clientErrors = computed(() => {
    const out: Record<string, string> = {}
    if (parsed.value.success) return out
    for (const issue of parsed.value.error.issues) {
      const key = issue.path[0]
      const name = typeof key === 'string' ? key : ''
      out[name] ??= sentence(issue.message)
    }
    return out
  })

  const errors = computed(() => {
    const out: Partial<Record<Field<S>, string>> = {}
    for (const name of Object.keys(values) as Field<S>[]) {
      const server = serverErrors.get(name)
      if (server && Object.is(server.value, values[name])) out[name] = server.message
      else if (submitted.value || touched.has(name)) {
        const message = clientErrors.value[name]
        if (message) out[name] = message
      }
    }
    return out
  })

  function id(name: Field<S>): string {
    return `${formId}-${name}`
  }

  /** Attributes for the field's control: id and the ARIA link to its message. */
  function aria(name: Field<S>) {
    const invalid = errors.value[name] !== undefined
    return { id: id(name), 'aria-invalid': invalid, 'aria-describedby': invalid ? `${id(name)}-error` : undefined }
  }

  function blur(name: Field<S>): void {
    touched.add(name)
  }

  function showServerError(error: ApiError): void {
    const name = options.errorField?.(error) ?? error.field
    if (name !== undefined && name in values) {
      serverErrors.set(name, { message: sentence(error.message), value: values[name as Field<S>] })
      touched.add(name)
    } else {
      formError.value = error.message
    }
  }

  async function focusFirstError(): Promise<void> {
    await nextTick()
    const first = (Object.keys(values) as Field<S>[]).find((name) => errors.value[name] !== undefined)
    if (first) document.getElementById(id(first))?.focus()
  }

  async function submit(event?: Event): Promise<void> {
    event?.preventDefault()
    if (submitting.value) return
    submitted.value = true
    formError.value = null
    const result = parsed.value
    if (!result.success) {
      formError.value = clientErrors.value[''] ?? null
      await focusFirstError()
      return
    }
    submitting.value = true
    try {
      await options.onSubmit(result.data)
    } catch (error) {
      if (error instanceof ApiError) showServerError(error)
      else {
        console.error(error)
        formError.value = 'Something went wrong on this page. Reload and try again.'
      }
      await focusFirstError()
    } finally {
      submitting.value = false
    }
  }

  function reset(next?: Values<S>): void {
    Object.assign(values, next ?? initial())
    touched.clear()
    serverErrors.clear()
    submitted.value = false
    formError.value = null
  }

  const form = reactive({ values, errors, formError, submitting, submitted, id, aria, blur, submit, reset })
  return form
}
