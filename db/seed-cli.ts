// `npm run db:seed`: migrates, then seeds the demo scenario into the file named by LIGHTSEAM_DB
// (default data/lightseam.sqlite) unless it already holds a project. LIGHTSEAM_BCRYPT_COST lowers the cost.
import { openDatabase } from './client'
import { runMigrations } from './migrate'
import { demoUsers, seedDemo } from './seed'

const file = process.env.LIGHTSEAM_DB ?? 'data/lightseam.sqlite'
const cost = Number(process.env.LIGHTSEAM_BCRYPT_COST ?? 10)
const { sqlite, db } = openDatabase(file)
try {
  runMigrations(db)
  if (seedDemo(db, { bcryptCost: Number.isInteger(cost) && cost >= 4 && cost <= 15 ? cost : 10 })) {
    console.warn(`${file}: seeded the demo scenario. Demo-only sign-ins (never use these for real work):`)
    for (const user of demoUsers)
      console.warn(`  ${user.role.padEnd(9)} ${user.email}  password: ${user.password}`)
  } else {
    console.warn(`${file}: already holds a project; nothing seeded.`)
  }
} finally {
  sqlite.close()
}
