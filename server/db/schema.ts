import type { ColumnType, Generated, Insertable, Selectable, Updateable } from 'kysely'

/** Timestamps come back as Date and may be written as Date or ISO text. */
type Timestamp = ColumnType<Date, Date | string | undefined, Date | string>
type RequiredTimestamp = ColumnType<Date, Date | string, Date | string>

export interface UsersTable {
  id: Generated<string>
  email: string
  name: string
  password_hash: string
  created_at: Timestamp
  updated_at: Timestamp
}

export interface SessionsTable {
  id: string
  user_id: string
  expires_at: RequiredTimestamp
}

export interface PasswordResetsTable {
  id: Generated<string>
  user_id: string
  token_hash: string
  expires_at: RequiredTimestamp
  used_at: Date | null
  created_at: Timestamp
}

export interface ProjectsTable {
  id: Generated<string>
  name: string
  description: Generated<string>
  created_by: string | null
  created_at: Timestamp
  updated_at: Timestamp
}

export interface MembershipsTable {
  project_id: string
  user_id: string
  role: 'owner' | 'measurer' | 'mentor' | 'guest'
  created_at: Timestamp
}

export interface MailOutboxTable {
  id: Generated<string>
  to_address: string
  subject: string
  text_body: string
  html_body: string | null
  created_at: Timestamp
  next_attempt_at: Timestamp
  attempts: Generated<number>
  last_error: string | null
  sent_at: Date | null
}

export interface DevMailTable {
  id: Generated<string>
  from_address: string
  to_addresses: string[]
  subject: string
  text_body: string
  html_body: string | null
  received_at: Timestamp
}

export interface Database {
  users: UsersTable
  sessions: SessionsTable
  password_resets: PasswordResetsTable
  projects: ProjectsTable
  memberships: MembershipsTable
  mail_outbox: MailOutboxTable
  dev_mail: DevMailTable
}

export type UserRow = Selectable<UsersTable>
export type NewUser = Insertable<UsersTable>
export type UserUpdate = Updateable<UsersTable>
export type ProjectRow = Selectable<ProjectsTable>
export type MembershipRow = Selectable<MembershipsTable>
export type MailRow = Selectable<MailOutboxTable>
export type DevMailRow = Selectable<DevMailTable>
