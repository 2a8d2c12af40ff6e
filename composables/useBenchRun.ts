import type { UploadAccepted } from '#shared/types/api'
import { uploadRecording, type BenchUploadRequest } from '~/utils/bench-upload'

/** Poll interval while a recording is queued or analysing (a verdict takes well under a second). */
const POLL_MS = 400
/** Consecutive failed polls before the bench gives up and says so. */
const POLL_ERROR_LIMIT = 5
const FINAL_STATUSES = new Set(['done', 'rejected', 'failed'])

export type BenchPhase = 'idle' | 'uploading' | 'waiting' | 'result'

function fetchRecording(id: number) {
  return $fetch(`/api/recordings/${id}`, { query: { include: 'curves' } })
}
export type BenchRecording = Awaited<ReturnType<typeof fetchRecording>>

const sleep = (ms: number) => new Promise((r) => setTimeout(r, ms))

/**
 * One unit through the bench: upload with progress, then follow the recording until the worker
 * has finished with it. A newer upload or a chosen row replaces whatever is being followed; leaving
 * the page stops everything.
 */
export function useBenchRun(opts: { onResult?: (r: BenchRecording) => void } = {}) {
  const phase = ref<BenchPhase>('idle')
  const progress = ref(0)
  const serial = ref('')
  const duplicate = ref(false)
  const recording = shallowRef<BenchRecording | null>(null)
  const error = ref<{ message: string; code: string } | null>(null)
  let generation = 0
  let abort: AbortController | undefined

  function begin(forSerial: string) {
    generation++
    abort?.abort()
    abort = undefined
    recording.value = null
    error.value = null
    duplicate.value = false
    serial.value = forSerial
    return generation
  }

  async function follow(id: number, gen: number, announce: boolean) {
    let failures = 0
    while (gen === generation) {
      try {
        const view = await fetchRecording(id)
        if (gen !== generation) return
        failures = 0
        recording.value = view
        serial.value = view.serial
        if (FINAL_STATUSES.has(view.status)) {
          phase.value = 'result'
          if (announce) opts.onResult?.(view)
          return
        }
      } catch (err) {
        if (gen !== generation) return
        if (++failures >= POLL_ERROR_LIMIT) {
          error.value = apiErrorOf(err)
          phase.value = 'idle'
          return
        }
      }
      await sleep(POLL_MS)
    }
  }

  async function upload(req: BenchUploadRequest) {
    const gen = begin(req.serial)
    phase.value = 'uploading'
    progress.value = 0
    abort = new AbortController()
    let accepted: UploadAccepted
    try {
      accepted = await uploadRecording(req, (f) => (progress.value = f), abort.signal)
    } catch (err) {
      if (gen !== generation) return
      error.value = apiErrorOf(err)
      phase.value = 'idle'
      return
    }
    if (gen !== generation) return
    duplicate.value = accepted.duplicate
    phase.value = 'waiting'
    await follow(accepted.id, gen, true)
  }

  /** Shows an earlier recording (a row of the recent table), following it if still in progress. */
  async function show(id: number, forSerial: string) {
    const gen = begin(forSerial)
    phase.value = 'waiting'
    await follow(id, gen, false)
  }

  onScopeDispose(() => {
    generation++
    abort?.abort()
  })

  return { phase, progress, serial, duplicate, recording, error, upload, show }
}
