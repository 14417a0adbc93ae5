import { z } from 'zod'

/** Ids are UUIDs made by PostgreSQL (gen_random_uuid). */
export const Id = z.uuid({ error: 'must be an id (a UUID)' })

export const Email = z
  .string({ error: 'must be an e-mail address' })
  .trim()
  .toLowerCase()
  .max(254, { error: 'must be at most 254 characters' })
  .pipe(z.email({ error: 'must be an e-mail address such as name@example.org' }))

/** Argon2 work grows with input length, so passwords are capped as well as floored. */
export const Password = z
  .string({ error: 'must be text' })
  .min(10, { error: 'must be at least 10 characters' })
  .max(200, { error: 'must be at most 200 characters' })

export const PersonName = z
  .string({ error: 'must be text' })
  .trim()
  .min(1, { error: 'must not be empty' })
  .max(80, { error: 'must be at most 80 characters' })

export const Timestamp = z.iso.datetime({ offset: true })

/** Every error the API sends has this shape. */
export const ApiErrorBody = z.object({
  error: z.object({
    code: z.string(),
    message: z.string(),
    field: z.string().optional(),
  }),
})
export type ApiErrorBody = z.infer<typeof ApiErrorBody>

/** Error codes shared by server and client. */
export const ErrorCode = {
  badRequest: 'bad-request',
  invalidInput: 'invalid-input',
  unauthenticated: 'unauthenticated',
  forbidden: 'forbidden',
  notFound: 'not-found',
  conflict: 'conflict',
  tooManyRequests: 'too-many-requests',
  payloadTooLarge: 'payload-too-large',
  badOrigin: 'bad-origin',
  invalidCredentials: 'invalid-credentials',
  invalidToken: 'invalid-token',
  /** An invitation addressed to another e-mail than the signed-in account's. */
  wrongAccount: 'wrong-account',
  /** The account's e-mail address is not confirmed yet (invitations need a proven address). */
  emailUnconfirmed: 'email-unconfirmed',
  internal: 'internal',
  unavailable: 'unavailable',
} as const
export type ErrorCode = (typeof ErrorCode)[keyof typeof ErrorCode]
