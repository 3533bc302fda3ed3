// Dexie needs IndexedDB; in node tests it comes from fake-indexeddb.
import 'fake-indexeddb/auto'
