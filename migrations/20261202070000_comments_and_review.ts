import { sql, type Kysely } from 'kysely'

// Comments on markers (threads: a first comment and its replies, resolved and reopened as a whole), the
// notices that tell a marker's author of others' comments (swept into mail_outbox, one message per author per
// gap), and each marker's review state (open, changes-asked, signed-off), whose changes are revisions.
export async function up(db: Kysely<any>): Promise<void> {
  await db.schema
    .createTable('comments')
    .addColumn('id', 'uuid', (c) => c.primaryKey().defaultTo(sql`gen_random_uuid()`))
    .addColumn('marker_id', 'uuid', (c) => c.notNull().references('markers.id').onDelete('cascade'))
    .addColumn('scene_id', 'uuid', (c) => c.notNull().references('scenes.id').onDelete('cascade'))
    // Null for a thread's first comment; a reply names that first comment.
    .addColumn('thread_id', 'uuid', (c) => c.references('comments.id').onDelete('cascade'))
    .addColumn('author_id', 'uuid', (c) => c.references('users.id').onDelete('set null'))
    .addColumn('body', 'text', (c) => c.notNull().check(sql`char_length(body) between 1 and 4000`))
    .addColumn('created_at', 'timestamptz', (c) => c.notNull().defaultTo(sql`now()`))
    // A thread is resolved as a whole: only its first comment carries these.
    .addColumn('resolved_at', 'timestamptz')
    .addColumn('resolved_by', 'uuid', (c) => c.references('users.id').onDelete('set null'))
    .addCheckConstraint('comments_resolved_on_first', sql`thread_id is null or resolved_at is null`)
    .execute()
  await db.schema.createIndex('comments_marker').on('comments').columns(['marker_id', 'created_at']).execute()
  await db.schema.createIndex('comments_thread').on('comments').column('thread_id').execute()

  await db.schema
    .createTable('comment_notices')
    .addColumn('id', 'bigserial', (c) => c.primaryKey())
    .addColumn('comment_id', 'uuid', (c) => c.notNull().references('comments.id').onDelete('cascade'))
    .addColumn('recipient_id', 'uuid', (c) => c.notNull().references('users.id').onDelete('cascade'))
    .addColumn('created_at', 'timestamptz', (c) => c.notNull().defaultTo(sql`now()`))
    // Set when the notice went into mail_outbox (or was dropped: the recipient left the project).
    .addColumn('mailed_at', 'timestamptz')
    .execute()
  await db.schema.createIndex('comment_notices_due').on('comment_notices').columns(['recipient_id', 'created_at']).where(sql.ref('mailed_at'), 'is', null).execute()

  await db.schema
    .alterTable('markers')
    .addColumn('review_state', 'text', (c) => c.notNull().defaultTo('open').check(sql`review_state in ('open', 'changes-asked', 'signed-off')`))
    .addColumn('review_by', 'uuid', (c) => c.references('users.id').onDelete('set null'))
    .addColumn('review_at', 'timestamptz')
    .addColumn('review_note', 'text')
    .execute()

  // Review changes are revisions too: a reviewer's ('reviewed') and the server's return to open after a
  // signed-off marker's geometry or placement changed ('reopened'), with the note saying why.
  await db.schema.alterTable('marker_revisions').dropConstraint('marker_revisions_action_check').execute()
  await db.schema
    .alterTable('marker_revisions')
    .addCheckConstraint('marker_revisions_action_check', sql`action in ('created', 'edited', 'deleted', 'restored', 'reviewed', 'reopened')`)
    .execute()
  await db.schema
    .alterTable('marker_revisions')
    .addColumn('review_state', 'text', (c) => c.check(sql`review_state in ('open', 'changes-asked', 'signed-off')`))
    .addColumn('note', 'text')
    .execute()
}

export async function down(db: Kysely<any>): Promise<void> {
  await db.deleteFrom('marker_revisions').where('action', 'in', ['reviewed', 'reopened']).execute()
  await db.schema.alterTable('marker_revisions').dropColumn('note').dropColumn('review_state').execute()
  await db.schema.alterTable('marker_revisions').dropConstraint('marker_revisions_action_check').execute()
  await db.schema
    .alterTable('marker_revisions')
    .addCheckConstraint('marker_revisions_action_check', sql`action in ('created', 'edited', 'deleted', 'restored')`)
    .execute()
  await db.schema.alterTable('markers').dropColumn('review_note').dropColumn('review_at').dropColumn('review_by').dropColumn('review_state').execute()
  await db.schema.dropTable('comment_notices').execute()
  await db.schema.dropTable('comments').execute()
}
