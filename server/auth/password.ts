import { hash, verify } from '@node-rs/argon2'
import type { Config } from '../config'

// @node-rs/argon2's Algorithm is a const enum, which isolatedModules cannot inline; 2 is Argon2id.
const ARGON2ID = 2

export interface PasswordHasher {
  hash(password: string): Promise<string>
  verify(hashed: string, password: string): Promise<boolean>
}

export function createPasswordHasher(cost: Config['argon2']): PasswordHasher {
  return {
    hash: (password) => hash(password, { algorithm: ARGON2ID, ...cost }),
    // The cost is read from the stored hash, so old hashes keep verifying after a cost change.
    verify: async (hashed, password) => {
      try {
        return await verify(hashed, password)
      } catch {
        return false
      }
    },
  }
}
