import { createHash } from 'node:crypto'
import { createReadStream } from 'node:fs'
import { open } from 'node:fs/promises'
import type { ByteSource } from '../analysis/index.ts'

/** A file on disk read in pieces, never whole (the engine's ByteSource); close it when done. */
export interface FileSource extends ByteSource {
  close(): Promise<void>
}

/** Opens a file for reading in pieces. */
export async function openFileSource(path: string): Promise<FileSource> {
  const fh = await open(path, 'r')
  try {
    const { size } = await fh.stat()
    return {
      size,
      async read(offset: number, length: number): Promise<Uint8Array> {
        const buf = Buffer.allocUnsafe(length)
        let got = 0
        while (got < length) {
          const { bytesRead } = await fh.read(buf, got, length - got, offset + got)
          if (bytesRead === 0) break
          got += bytesRead
        }
        return got === length ? buf : buf.subarray(0, got)
      },
      close: () => fh.close(),
    }
  } catch (err) {
    await fh.close()
    throw err
  }
}

/** Runs `use` on the file read in pieces, and closes it whatever happens. */
export async function withFileSource<T>(path: string, use: (src: FileSource) => Promise<T>): Promise<T> {
  const src = await openFileSource(path)
  try {
    return await use(src)
  } finally {
    await src.close()
  }
}

/** The SHA-256 of a file, hex, read as a stream (a few dozen kB in memory at a time). */
export function sha256OfFile(path: string): Promise<string> {
  return new Promise((resolve, reject) => {
    const hash = createHash('sha256')
    createReadStream(path)
      .on('data', (chunk) => hash.update(chunk))
      .on('error', reject)
      .on('end', () => resolve(hash.digest('hex')))
  })
}
