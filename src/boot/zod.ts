import { z } from 'zod'

// Imported first by main.ts, before any schema parses. zod compiles fast parsers with `new Function` when
// it may; the app's CSP (script-src 'self', no 'unsafe-eval') forbids that, and zod's probe for it is
// itself reported by the browser as a policy violation. Without the compiler zod parses the same way.
z.config({ jitless: true })
