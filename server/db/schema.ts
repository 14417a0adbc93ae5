import type { ColumnType, Generated, Insertable, Selectable, Updateable } from 'kysely'
import type { MarkerKind } from '@shared/kinds'

/** Timestamps come back as Date and may be written as Date or ISO text. */
type Timestamp = ColumnType<Date, Date | string | undefined, Date | string>
type RequiredTimestamp = ColumnType<Date, Date | string, Date | string>

export interface UsersTable {
  id: Generated<string>
  email: string
  name: string
  password_hash: string
  /** Null until the address is confirmed by its e-mailed link. */
  email_confirmed_at: Date | null
  created_at: Timestamp
  updated_at: Timestamp
}

export interface EmailConfirmationsTable {
  id: Generated<string>
  user_id: string
  token_hash: string
  expires_at: Date
  used_at: Date | null
  created_at: Generated<Date>
}

/** Failed sign-ins per address typed (known or not), for the growing delay. */
export interface SignInFailuresTable {
  email: string
  failures: number
  last_failed_at: Date
}

export interface SessionsTable {
  /** SHA-256 (hex) of the session id the cookie carries (server/auth/lucia.ts), never the id itself. */
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
  /** Metres; null: max(3 x mean spacing, 5 mm). */
  anchor_tolerance: number | null
  required_margin: Generated<number>
  /** Bytes the project may receive in any 24 hours (bigint: read as text). */
  daily_upload_bytes: ColumnType<string, number | undefined, number>
  /** Points a scan of the project may hold (bigint: read as text). */
  max_scan_points: ColumnType<string, number | undefined, number>
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

export interface UploadTokensTable {
  id: Generated<string>
  project_id: string
  label: string
  token_hash: string
  token_hint: string
  created_by: string | null
  created_at: Timestamp
  last_used_at: Date | null
  revoked_at: Date | null
  expires_at: RequiredTimestamp
}

/** Bytes each upload brought to its project: the daily quota counts these (a deleted scan still counts). */
export interface UploadUsageTable {
  id: Generated<string>
  project_id: string
  size_bytes: number
  created_at: Timestamp
}

export interface UploadsTable {
  id: Generated<string>
  project_id: string
  scan_id: string
  object_key: string
  s3_upload_id: string
  file_name: string
  scan_name: string | null
  declared_format: string | null
  declared_size: number
  part_size: number
  part_count: number
  resume_key: string | null
  status: Generated<'receiving' | 'completing' | 'complete' | 'abandoned'>
  created_by: string | null
  upload_token_id: string | null
  created_at: Timestamp
  updated_at: Timestamp
}

export interface UploadPartsTable {
  upload_id: string
  part_number: number
  etag: string
  size_bytes: number
  created_at: Timestamp
}

export interface InvitesTable {
  id: Generated<string>
  project_id: string
  email: string
  role: 'measurer' | 'mentor'
  token_hash: string
  invited_by: string | null
  created_at: Timestamp
  last_sent_at: Timestamp
  expires_at: RequiredTimestamp
  accepted_at: Date | null
  accepted_by: string | null
  revoked_at: Date | null
}

/** Viewing passes: a guest without an account sees one project, read-only. */
export interface GuestLinksTable {
  id: Generated<string>
  project_id: string
  email: string
  name: string
  token_hash: string
  /** SHA-256 of the guest session cookie, set when the one-time token is swapped for it. */
  session_hash: string | null
  created_by: string | null
  created_at: Timestamp
  expires_at: RequiredTimestamp
  opened_at: Date | null
  last_used_at: Date | null
  revoked_at: Date | null
  /** The owner let this pass download original scan files (off by default). */
  allow_download: Generated<boolean>
}

/** bigint columns come back from pg as strings; the mappers turn them into numbers. */
type BigInt = ColumnType<string, number | string, number | string>
type Json<T> = ColumnType<T, string | undefined, string>

export interface ScansTable {
  id: Generated<string>
  project_id: string
  name: string
  file_name: string
  format: string | null
  declared_format: string | null
  status: Generated<'queued' | 'processing' | 'ready' | 'failed'>
  progress: Generated<number>
  stage: string | null
  error: string | null
  size_bytes: BigInt
  sha256: string | null
  blob_key: string
  point_count: BigInt | null
  min_x: number | null
  min_y: number | null
  min_z: number | null
  max_x: number | null
  max_y: number | null
  max_z: number | null
  spacing: number | null
  estimated_uncertainty: number | null
  entered_uncertainty: number | null
  attributes: Json<{ color?: boolean; intensity?: boolean; perPointUncertainty?: boolean }>
  dropped: Json<Record<string, number>>
  station: Json<Record<string, unknown> | null>
  uploaded_by: string | null
  upload_token_id: string | null
  heartbeat_at: Date | null
  /** Processing attempts claimed so far; a scan whose third attempt crashed or stalled fails. */
  attempts: Generated<number>
  /** The worker process (host:pid) that claimed the latest attempt. */
  claimed_by: string | null
  /** The current claim (a new one per attempt): only its holder's writes count (migration 20261205145000). */
  claim_id: string | null
  /** E57 stations: the upload's scan (station 0) for the others; null on the upload's own row. */
  source_scan_id: string | null
  /** E57: which data3D entry of the file this scan reads (null: the whole file). */
  station_index: number | null
  /** E57: how many stations the file has (on every station's row). */
  station_count: number | null
  /** E57: the station's pose in the file's frame, a column-major rigid 4x4. */
  pose: number[] | null
  /** E57, on the upload's scan: the scene made with every station placed at its pose. */
  stations_scene_id: string | null
  created_at: Timestamp
  updated_at: Timestamp
  ready_at: Date | null
}

export interface ScanTilesTable {
  scan_id: string
  node_key: string
  level: number
  point_count: number
  min_x: number
  min_y: number
  min_z: number
  max_x: number
  max_y: number
  max_z: number
  byte_size: number
  data: Buffer
  /** The claim that made the tile; it must be the scan's current one (a foreign key). */
  claim_id: string
}

export interface ExportsTable {
  id: Generated<string>
  project_id: string
  scene_id: string
  source: 'scene' | 'placement' | 'object'
  /** The object exported (source 'object'); null once it is deleted. */
  object_id: ColumnType<string | null, string | null | undefined, string | null>
  /** The placement exported (source 'placement'); null once that placement is removed. */
  instance_id: string | null
  format: 'las' | 'e57' | 'ply'
  file_name: string
  status: Generated<'queued' | 'running' | 'ready' | 'failed'>
  progress: Generated<number>
  point_count: BigInt | null
  byte_size: BigInt | null
  object_key: string | null
  error: string | null
  requested_by: string | null
  created_at: Timestamp
  updated_at: Timestamp
  finished_at: Date | null
}

export interface ScenesTable {
  id: Generated<string>
  project_id: string
  name: string
  created_by: string | null
  created_at: Timestamp
  updated_at: Timestamp
}

export interface SceneInstancesTable {
  id: Generated<string>
  scene_id: string
  scan_id: string
  /** Column-major 4x4, rigid (checked at the API). */
  matrix: number[]
  visible: Generated<boolean>
  color: string
  created_at: Timestamp
  updated_at: Timestamp
}

export interface MarkersTable {
  id: Generated<string>
  scene_id: string
  /** One of the kinds in shared/kinds (the schemas decide; the database keeps no list of its own). */
  kind: MarkerKind
  label: string
  /** JSON: [{instanceId, x, y, z}] in each placement's own frame. */
  anchors: Json<{ instanceId: string; x: number; y: number; z: number }[]>
  params: Json<Record<string, unknown>>
  revision: Generated<number>
  check_state: Generated<'pending' | 'checked' | 'off-scan' | 'too-few-points' | 'invalid-geometry'>
  /** The server process holding the pending check (server_processes.id); only it stores the result. */
  check_owner: string | null
  check: Json<Record<string, unknown> | null>
  created_by: string | null
  updated_by: string | null
  created_at: Timestamp
  updated_at: Timestamp
  review_state: Generated<'open' | 'changes-asked' | 'signed-off'>
  review_by: string | null
  review_at: Date | null
  review_note: string | null
}

export interface SceneUpdatesTable {
  id: Generated<string>
  scene_id: string
  doc: 'work' | 'record'
  /** bigint as text: the update's position in its document, in commit order (scene_documents.last_seq). */
  seq: string
  update: Buffer
  user_id: string | null
  created_at: Timestamp
}

export interface SceneSnapshotsTable {
  scene_id: string
  doc: 'work' | 'record'
  state: Buffer
  /** bigint as text: the last position (scene_updates.seq) folded in. */
  upto: string
  created_at: Timestamp
}

/** express-rate-limit's hits in a fixed window per key, shared by every process (middleware/rateLimitStore.ts). */
export interface RateLimitHitsTable {
  key: string
  hits: number
  reset_at: Date
}

/** Each live document's counter of positions: its row is the document's lock for writes and compaction. */
export interface SceneDocumentsTable {
  scene_id: string
  doc: 'work' | 'record'
  last_seq: string
}

export interface MarkerRevisionsTable {
  id: Generated<string>
  marker_id: string
  scene_id: string
  revision: number
  action: 'created' | 'edited' | 'deleted' | 'restored' | 'reviewed' | 'reopened'
  state: Json<{ kind: string; label: string; anchors: unknown[]; params: Record<string, unknown> }>
  user_id: string | null
  created_at: Timestamp
  /** Review revisions: the state set ('reviewed') or returned to ('reopened': open). */
  review_state: 'open' | 'changes-asked' | 'signed-off' | null
  /** The reviewer's note, or why the server returned a signed-off marker to open. */
  note: string | null
}

export interface CommentsTable {
  id: Generated<string>
  marker_id: string
  scene_id: string
  /** Null for a thread's first comment. */
  thread_id: string | null
  author_id: string | null
  body: string
  created_at: Timestamp
  /** First comments only: the thread's resolution. */
  resolved_at: Date | null
  resolved_by: string | null
}

export interface CommentNoticesTable {
  id: Generated<string>
  comment_id: string
  recipient_id: string
  created_at: Timestamp
  mailed_at: Date | null
}

export interface SceneCheckpointsTable {
  id: Generated<string>
  scene_id: string
  name: string
  /** The scene's markers (the API's shape, values and checks included) when the checkpoint was set. */
  markers: Json<unknown[]>
  marker_count: number
  created_by: string | null
  created_at: Timestamp
}

export interface RegistrationsTable {
  id: Generated<string>
  /** The server process running the refinement (server_processes.id); null when none runs. */
  refine_owner: string | null
  scene_id: string
  kind: Generated<'fit' | 'undo'>
  state: Generated<'draft' | 'accepted' | 'undone'>
  moving_instance_id: string
  held_instance_id: string | null
  moving_name: string
  held_name: string
  method: 'svd' | 'horn' | null
  /** The tie pairs as snapped (shared/schemas/registrations.ts TiePair without residuals). */
  pairs: Json<unknown[]>
  fit: Json<Record<string, unknown> | null>
  icp: Json<Record<string, unknown> | null>
  /** Scene-frame correction moving -> held, column-major 4x4. */
  correction: number[] | null
  rms: number | null
  rms_source: 'check-points' | 'icp' | 'tie-points' | null
  registration_u: number | null
  matrix_before: number[]
  held_matrix: number[] | null
  matrix_after: number[] | null
  undoes_id: string | null
  created_by: string | null
  created_at: Timestamp
  updated_at: Timestamp
  accepted_by: string | null
  accepted_at: Date | null
  undone_by: string | null
  undone_at: Date | null
}

/** One row per running server process: its id and its last beat (server/jobs/leases.ts). */
export interface ServerProcessesTable {
  id: string
  started_at: Generated<Date>
  beat_at: Generated<Date>
}

export interface SceneObjectsTable {
  id: Generated<string>
  scene_id: string
  name: string
  /** StraySettings ({k, n}) or null. */
  stray: Json<{ k: number; n: number } | null>
  revision: Generated<number>
  created_by: string | null
  created_at: Timestamp
  updated_at: Timestamp
}

export interface ObjectMembersTable {
  object_id: string
  instance_id: string
  position: number
}

export interface TrimsTable {
  id: Generated<string>
  scene_id: string
  instance_id: string
  /** Null: a scene cut of the placement. */
  object_id: string | null
  mode: 'keep' | 'cut'
  label: string | null
  /** TrimShape in the placement's own frame. */
  shape: Json<Record<string, unknown>>
  revision: Generated<number>
  created_by: string | null
  created_at: Timestamp
  updated_at: Timestamp
}

export interface ObjectRevisionsTable {
  id: Generated<string>
  scene_id: string
  object_id: string | null
  trim_id: string | null
  action: 'created' | 'edited' | 'deleted'
  state: Json<Record<string, unknown>>
  user_id: string | null
  created_at: Timestamp
}

export interface Database {
  scene_objects: SceneObjectsTable
  object_members: ObjectMembersTable
  trims: TrimsTable
  object_revisions: ObjectRevisionsTable
  server_processes: ServerProcessesTable
  registrations: RegistrationsTable
  markers: MarkersTable
  comments: CommentsTable
  comment_notices: CommentNoticesTable
  scene_checkpoints: SceneCheckpointsTable
  marker_revisions: MarkerRevisionsTable
  scene_updates: SceneUpdatesTable
  scene_snapshots: SceneSnapshotsTable
  scene_documents: SceneDocumentsTable
  rate_limit_hits: RateLimitHitsTable
  scenes: ScenesTable
  exports: ExportsTable
  scene_instances: SceneInstancesTable
  upload_tokens: UploadTokensTable
  upload_usage: UploadUsageTable
  uploads: UploadsTable
  upload_parts: UploadPartsTable
  invites: InvitesTable
  guest_links: GuestLinksTable
  scans: ScansTable
  scan_tiles: ScanTilesTable
  users: UsersTable
  sessions: SessionsTable
  password_resets: PasswordResetsTable
  email_confirmations: EmailConfirmationsTable
  sign_in_failures: SignInFailuresTable
  projects: ProjectsTable
  memberships: MembershipsTable
  mail_outbox: MailOutboxTable
  dev_mail: DevMailTable
}

export type UserRow = Selectable<UsersTable>
export type NewUser = Insertable<UsersTable>
export type UserUpdate = Updateable<UsersTable>
export type MarkerRow = Selectable<MarkersTable>
export type ProjectRow = Selectable<ProjectsTable>
export type MembershipRow = Selectable<MembershipsTable>
export type MailRow = Selectable<MailOutboxTable>
export type DevMailRow = Selectable<DevMailTable>
export type ScanRow = Selectable<ScansTable>
export type NewScan = Insertable<ScansTable>
export type ScanUpdate = Updateable<ScansTable>
export type UploadTokenRow = Selectable<UploadTokensTable>
export type InviteRow = Selectable<InvitesTable>
export type GuestLinkRow = Selectable<GuestLinksTable>
export type UploadRow = Selectable<UploadsTable>
