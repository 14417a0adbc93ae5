import type { z } from 'zod'
import { ApiErrorBody } from '@shared/schemas'

/** Codes the client itself uses when there is no server answer to read. */
export const ClientErrorCode = {
  network: 'network',
  badResponse: 'bad-response',
} as const

/** Any failed request: the server's `{ error: { code, message, field } }`, or a client-side stand-in. */
export class ApiError extends Error {
  override readonly name = 'ApiError'
  constructor(
    readonly status: number,
    readonly code: string,
    message: string,
    readonly field?: string,
  ) {
    super(message)
  }
}

export function isApiError(value: unknown): value is ApiError {
  return value instanceof ApiError
}

type Method = 'GET' | 'POST' | 'PUT' | 'PATCH' | 'DELETE'

interface RequestOptions {
  body?: unknown
  signal?: AbortSignal
  /** Statuses besides 2xx whose body is still parsed with the success schema (health's 503). */
  alsoAccept?: readonly number[]
}

function fallbackMessage(status: number): string {
  if (status === 401) return 'You are signed out. Sign in again.'
  if (status === 403) return 'Your role in this project does not allow that.'
  if (status === 404) return 'Not found.'
  if (status === 413) return 'The file is larger than the server accepts.'
  if (status === 429) return 'Too many attempts. Wait a minute and try again.'
  if (status >= 500) return `The server could not finish this (${status}). Try again in a moment.`
  return `The server refused this request (${status}).`
}

async function readJson(response: Response): Promise<unknown> {
  const text = await response.text()
  if (text === '') return undefined
  try {
    return JSON.parse(text) as unknown
  } catch {
    return undefined
  }
}

async function request(method: Method, path: string, options: RequestOptions = {}): Promise<{ status: number; data: unknown }> {
  const headers: Record<string, string> = { Accept: 'application/json' }
  if (options.body !== undefined) headers['Content-Type'] = 'application/json'
  let response: Response
  try {
    response = await fetch(path, {
      method,
      headers,
      credentials: 'same-origin',
      body: options.body === undefined ? undefined : JSON.stringify(options.body),
      signal: options.signal,
    })
  } catch (cause) {
    if (cause instanceof DOMException && cause.name === 'AbortError') throw cause
    throw new ApiError(0, ClientErrorCode.network, 'Cannot reach the Spanmark server. Check the connection and try again.')
  }
  const data = await readJson(response)
  if (response.ok || options.alsoAccept?.includes(response.status)) return { status: response.status, data }
  throw apiErrorFrom(response.status, data)
}

/** The ApiError for a failed answer: the server's own error body if it sent one, else a plain message by status. */
export function apiErrorFrom(status: number, data: unknown): ApiError {
  const parsed = ApiErrorBody.safeParse(data)
  if (parsed.success) {
    const { code, message, field } = parsed.data.error
    return new ApiError(status, code, message, field)
  }
  return new ApiError(status, `http-${status}`, fallbackMessage(status))
}

/** Parses a success body with its shared schema (exported for requests not made through `send`, such as uploads). */
export function parseWith<S extends z.ZodType>(schema: S, data: unknown, path: string): z.output<S> {
  const parsed = schema.safeParse(data)
  if (parsed.success) return parsed.data
  // A shape mismatch is a bug between server and client; keep the detail in the console, not the toast.
  console.error(`Unexpected response from ${path}`, parsed.error.issues)
  throw new ApiError(0, ClientErrorCode.badResponse, 'The server sent an answer this page does not understand. Reload the page.')
}

/** Request whose success body is parsed with a shared schema. */
export async function send<S extends z.ZodType>(method: Method, path: string, schema: S, options?: RequestOptions): Promise<z.output<S>> {
  const { data } = await request(method, path, options)
  return parseWith(schema, data, path)
}

/** Request answered with 202/204 and no body the client needs. */
export async function sendNoContent(method: Method, path: string, options?: RequestOptions): Promise<void> {
  await request(method, path, options)
}

export const http = {
  get: <S extends z.ZodType>(path: string, schema: S, options?: Omit<RequestOptions, 'body'>) => send('GET', path, schema, options),
  post: <S extends z.ZodType>(path: string, body: unknown, schema: S) => send('POST', path, schema, { body }),
  put: <S extends z.ZodType>(path: string, body: unknown, schema: S) => send('PUT', path, schema, { body }),
  patch: <S extends z.ZodType>(path: string, body: unknown, schema: S) => send('PATCH', path, schema, { body }),
  postNoContent: (path: string, body?: unknown) => sendNoContent('POST', path, { body }),
  deleteNoContent: (path: string) => sendNoContent('DELETE', path),
}

/** Builds a path with each dynamic part encoded. */
export function apiPath(strings: TemplateStringsArray, ...parts: string[]): string {
  return strings.reduce((out, s, i) => out + s + (i < parts.length ? encodeURIComponent(parts[i] ?? '') : ''), '')
}
