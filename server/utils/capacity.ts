/**
 * A budget shared by the work one process runs at once (bytes of memory, or slots of one): work
 * takes its share before it starts and gives it back when it ends, so the process never holds more
 * than the budget. A share larger than the whole budget is granted only when nothing else holds
 * any, so such work runs alone instead of never.
 */
export class Capacity {
  private used = 0
  private holders = 0
  private readonly waiting: { amount: number; grant: (release: () => void) => void }[] = []

  constructor(readonly total: number) {
    if (!(total > 0)) throw new RangeError(`A capacity must be above 0 (got ${total})`)
  }

  /** What is taken now. */
  get inUse(): number {
    return this.used
  }

  private fits(amount: number): boolean {
    return this.holders === 0 || this.used + amount <= this.total
  }

  private grant(amount: number): () => void {
    this.used += amount
    this.holders++
    let released = false
    return () => {
      if (released) return
      released = true
      this.used -= amount
      this.holders--
      this.wake()
    }
  }

  private wake(): void {
    // In arrival order: a large share waiting at the head is not overtaken by small ones forever.
    while (this.waiting.length && this.fits(this.waiting[0]!.amount)) {
      const next = this.waiting.shift()!
      next.grant(this.grant(next.amount))
    }
  }

  /** Takes `amount` now if it fits and nobody waits before it; otherwise null. The result releases it. */
  tryTake(amount: number): (() => void) | null {
    if (this.waiting.length || !this.fits(amount)) return null
    return this.grant(amount)
  }

  /** Waits until `amount` fits (in arrival order) and takes it. The result releases it. */
  take(amount: number): Promise<() => void> {
    const now = this.tryTake(amount)
    if (now) return Promise.resolve(now)
    return new Promise((grant) => this.waiting.push({ amount, grant }))
  }
}

/** A positive whole number from the environment, or the default. */
export function positiveIntFromEnv(value: string | undefined, fallback: number): number {
  const n = Number(value)
  return Number.isInteger(n) && n > 0 ? n : fallback
}
