import { index, integer, sqliteTable, text } from 'drizzle-orm/sqlite-core'
import { deleted, serverSeq } from './columns'
import { users } from './people'
import { noteEntities, photoEntities } from './values'

export const photos = sqliteTable('photos', {
  // Lowercase hex sha256 of the exact uploaded bytes: the same photo twice is one row and one file.
  sha256: text('sha256').primaryKey(),
  mime: text('mime').notNull(),
  size: integer('size').notNull(),
  width: integer('width'),
  height: integer('height'),
  uploadedBy: text('uploaded_by')
    .notNull()
    .references(() => users.id),
  uploadedAt: text('uploaded_at').notNull(),
  storageKey: text('storage_key').notNull(),
})

export const photoLinks = sqliteTable(
  'photo_links',
  {
    id: text('id').primaryKey(),
    // Deliberately no foreign key to photos: a push never waits for uploads, so a link may name a photo
    // that arrives later (shown as missing until then).
    sha256: text('sha256').notNull(),
    entity: text('entity', { enum: photoEntities }).notNull(),
    entityId: text('entity_id').notNull(),
    addedBy: text('added_by')
      .notNull()
      .references(() => users.id),
    createdAt: text('created_at').notNull(),
    serverSeq: serverSeq(),
    deleted: deleted(),
  },
  (t) => [
    index('photo_links_entity').on(t.entity, t.entityId),
    index('photo_links_sha256').on(t.sha256),
    index('photo_links_server_seq').on(t.serverSeq),
  ],
)

export const notes = sqliteTable(
  'notes',
  {
    id: text('id').primaryKey(),
    entity: text('entity', { enum: noteEntities }).notNull(),
    entityId: text('entity_id').notNull(),
    authorId: text('author_id')
      .notNull()
      .references(() => users.id),
    body: text('body').notNull(),
    createdAt: text('created_at').notNull(),
    serverSeq: serverSeq(),
    deleted: deleted(),
  },
  (t) => [index('notes_entity').on(t.entity, t.entityId), index('notes_server_seq').on(t.serverSeq)],
)
