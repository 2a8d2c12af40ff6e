import type { Role } from '../utils/roles'

declare module '#auth-utils' {
  interface User {
    id: number
    email: string
    displayName: string
    role: Role
  }
}

export {}
