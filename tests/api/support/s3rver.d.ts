// The fake S3 server the storage tests start ships no types; these are the members they use.
declare module 's3rver' {
  import type { AddressInfo } from 'node:net'

  interface S3rverOptions {
    address?: string
    port?: number
    silent?: boolean
    directory?: string
    configureBuckets?: Array<{ name: string; configs: Array<string | Buffer> }>
  }

  export default class S3rver {
    constructor(options: S3rverOptions)
    run(): Promise<AddressInfo>
    close(): Promise<void>
  }
}
