// Classifies each arriving block against what the link has delivered so far: in order, after a
// gap, a duplicate, a late (reordered) block, or time going backwards. Pure and synchronous so
// the rules in docs/ingest-protocol.md can be tested one by one.

export type BlockVerdict =
  | { kind: 'in-order'; trimFrom: number }
  | { kind: 'gap'; missingSeqs: number; missingSamples: number; trimFrom: number }
  | { kind: 'sample-gap'; missingSamples: number; trimFrom: number }
  | { kind: 'duplicate' }
  | { kind: 'reordered' }
  | { kind: 'backwards'; reason: string }

export interface SequenceCounts {
  blocks: number
  sequenceGaps: number
  missingBlocks: number
  sampleGaps: number
  missingSamples: number
  duplicates: number
  reordered: number
}

/** Sequence numbers remembered as missing, to tell a late block from a duplicate. */
const MISSING_MEMORY = 1024

export class SequenceTracker {
  /** Next expected block sequence number; null until the first block of this link. */
  private nextSeq: number | null = null
  /** Next expected sample index (first sample of the next block). */
  private nextSample: number
  private missing = new Set<number>()
  /** After a reconnect the bridge may resend what it had buffered: overlap is trimmed, not refused. */
  private resuming: boolean
  readonly counts: SequenceCounts = { blocks: 0, sequenceGaps: 0, missingBlocks: 0, sampleGaps: 0, missingSamples: 0, duplicates: 0, reordered: 0 }

  constructor(startSample: number | null) {
    this.nextSample = startSample ?? 0
    this.resuming = startSample !== null && startSample > 0
  }

  get expectedSample(): number {
    return this.nextSample
  }

  classify(seq: number, firstSample: number, sampleCount: number): BlockVerdict {
    this.counts.blocks++
    const end = firstSample + sampleCount
    if (this.nextSeq === null || seq === this.nextSeq) return this.accept(seq, firstSample, end, 0)
    if (seq > this.nextSeq) {
      const missingSeqs = seq - this.nextSeq
      for (let s = this.nextSeq; s < seq && this.missing.size < MISSING_MEMORY; s++) this.missing.add(s)
      this.counts.sequenceGaps++
      this.counts.missingBlocks += missingSeqs
      return this.accept(seq, firstSample, end, missingSeqs)
    }
    // seq is behind: a block we counted as missing arriving late, or a repeat.
    if (this.missing.delete(seq)) {
      this.counts.reordered++
      return { kind: 'reordered' }
    }
    this.counts.duplicates++
    return { kind: 'duplicate' }
  }

  private accept(seq: number, firstSample: number, end: number, missingSeqs: number): BlockVerdict {
    let trimFrom = 0
    if (firstSample < this.nextSample) {
      if (!this.resuming) return { kind: 'backwards', reason: `block ${seq} starts at sample ${firstSample}, before the expected ${this.nextSample}` }
      if (end <= this.nextSample) {
        // Data the server already has, resent by the bridge after a reconnect.
        this.nextSeq = seq + 1
        this.counts.duplicates++
        return { kind: 'duplicate' }
      }
      trimFrom = this.nextSample - firstSample
    }
    this.resuming = false
    const missingSamples = Math.max(0, firstSample - this.nextSample)
    this.nextSeq = seq + 1
    this.nextSample = end
    if (missingSamples > 0) {
      this.counts.sampleGaps++
      this.counts.missingSamples += missingSamples
    }
    if (missingSeqs > 0) return { kind: 'gap', missingSeqs, missingSamples, trimFrom }
    if (missingSamples > 0) return { kind: 'sample-gap', missingSamples, trimFrom }
    return { kind: 'in-order', trimFrom }
  }
}
