import { DomainError } from '../../shared/utils/domain-error'
import { randomUUID } from 'node:crypto'
import { copyFile, mkdir, open, readFile, rename, rm } from 'node:fs/promises'
import { dirname, join, resolve, sep } from 'node:path'
import { openFileSource, type FileSource } from './file-source.ts'

/**
 * Where raw recordings live. Kept behind this small interface so an S3-compatible store can
 * replace the directory without touching the routes or the worker.
 */
export interface RecordingStorage {
  /** Moves a finished temporary file into the store under `key`, durably (fsync) before returning. */
  putFile(key: string, fromPath: string): Promise<void>
  read(key: string): Promise<Buffer>
  /** Opens a stored file to be read in pieces (a long recording is never loaded whole). */
  open(key: string): Promise<FileSource>
  remove(key: string): Promise<void>
}

/** A key that never collides: date folders, a random id, the start of the content hash. */
export function newStorageKey(sha256: string, kind: 'sweep' | 'impedance_table', now = new Date()): string {
  const ext = kind === 'sweep' ? 'wav' : 'txt'
  const y = now.getUTCFullYear()
  const m = String(now.getUTCMonth() + 1).padStart(2, '0')
  return `${y}/${m}/${randomUUID()}-${sha256.slice(0, 12)}.${ext}`
}

/** errno codes that mean the store cannot take a file now (full, read-only, not a folder, no permission). */
export const STORAGE_FAULT_CODES = ['ENOSPC', 'EDQUOT', 'EROFS', 'EACCES', 'EPERM', 'ENOTDIR', 'EEXIST', 'EISDIR', 'EIO'] as const

/** The store cannot take the file (disk full, read-only, wrong permissions): nothing was stored. */
export class StorageUnavailable extends DomainError<'storage_unavailable'> {
  constructor(
    /** The operating system's errno code, e.g. ENOSPC (also in the answer's data). */
    readonly errno: string,
    message: string,
  ) {
    super('storage_unavailable', message, { errno })
  }
}

/** Turns a file-system error of the store into StorageUnavailable; other errors come back unchanged. */
export function asStorageFault(err: unknown): unknown {
  const code = (err as NodeJS.ErrnoException | undefined)?.code
  if (typeof code === 'string' && (STORAGE_FAULT_CODES as readonly string[]).includes(code)) {
    return new StorageUnavailable(code, `The recording store cannot take the file (${code}); ask an administrator to check the storage folder's space and permissions`)
  }
  return err
}

export class DirectoryStorage implements RecordingStorage {
  constructor(private readonly root: string) {}

  private pathOf(key: string): string {
    const p = resolve(this.root, key)
    if (!p.startsWith(resolve(this.root) + sep)) throw new Error(`storage key escapes the store: ${key}`)
    return p
  }

  /**
   * @throws StorageUnavailable when the folder is full, read-only, not writable or not a folder;
   *   the destination is removed again, so a failed put leaves no partial file behind.
   */
  async putFile(key: string, fromPath: string): Promise<void> {
    const dest = this.pathOf(key)
    try {
      await this.put(dest, fromPath)
    } catch (err) {
      await rm(dest, { force: true }).catch(() => {})
      throw asStorageFault(err)
    }
  }

  private async put(dest: string, fromPath: string): Promise<void> {
    await mkdir(dirname(dest), { recursive: true })
    try {
      await rename(fromPath, dest)
    } catch (err) {
      if ((err as NodeJS.ErrnoException).code !== 'EXDEV') throw err
      await copyFile(fromPath, dest)
      await rm(fromPath, { force: true })
    }
    // The row that points here commits after this returns: make the bytes and the name durable first.
    for (const p of [dest, dirname(dest)]) {
      const fh = await open(p, 'r')
      try {
        await fh.sync()
      } finally {
        await fh.close()
      }
    }
  }

  read(key: string): Promise<Buffer> {
    return readFile(this.pathOf(key))
  }

  open(key: string): Promise<FileSource> {
    return openFileSource(this.pathOf(key))
  }

  async remove(key: string): Promise<void> {
    await rm(this.pathOf(key), { force: true })
  }
}

export function directoryStorage(dataDir: string): DirectoryStorage {
  return new DirectoryStorage(join(dataDir, 'recordings'))
}
