import type { H3Event } from 'h3'
import { DomainError } from '../../shared/utils/domain-error'
import { Capacity, positiveIntFromEnv } from './capacity'
import { RETRY_AFTER_S } from './errors'

/**
 * Uploads one server process receives and checks at once (CONETRAIL_UPLOAD_SLOTS, default 64: a
 * plant whose stations, up to 64, all send at once is never refused). Each holds at most about 5 MB while it is read
 * and validated (the multipart parser's buffers, one 1 MB block of the file and its decoded
 * samples, 4 MB for 16-bit mono: the file itself streams to disk and is validated block by block),
 * so the slots bound what uploads can take, whatever their size: at most about 330 MB for 64
 * (about 2 MB each for the usual 3-channel 24-bit recording).
 */
export const DEFAULT_UPLOAD_SLOTS = 64

let slots: Capacity | undefined

function uploadSlots(): Capacity {
  slots ??= new Capacity(positiveIntFromEnv(process.env.CONETRAIL_UPLOAD_SLOTS, DEFAULT_UPLOAD_SLOTS))
  return slots
}

/**
 * Takes one upload slot for this request, from before its body is read until its answer is sent
 * (or the connection closes). When every slot is taken the upload is refused, not queued:
 * 503 `busy` with Retry-After, before anything is read or stored, and the station sends it again.
 * @throws DomainError `busy`
 */
export function holdUploadSlot(event: H3Event): void {
  const release = uploadSlots().tryTake(1)
  if (!release) {
    throw new DomainError('busy', `The server is checking ${uploadSlots().total} uploads already: send the file again in a few seconds`, { retryAfterS: RETRY_AFTER_S })
  }
  event.node.res.once('finish', release)
  event.node.res.once('close', release)
}
