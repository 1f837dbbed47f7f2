// The outcome of a feedback trial from the decisions made during its imagery phase. The
// decided class is the one the decoder chose most often; a trial is a hit when that is the
// cued class, a miss when another class won, and a timeout when no class won clearly
// (no decision at all, or the winner's share of decisions below `minShare`).

export interface TrialTally {
  votes: number[]
  total: number
}

export function emptyTally(classCount: number): TrialTally {
  return { votes: new Array(classCount).fill(0), total: 0 }
}

export function addVote(tally: TrialTally, classIndex: number): void {
  if (classIndex >= 0 && classIndex < tally.votes.length) {
    tally.votes[classIndex]++
    tally.total++
  }
}

export function scoreTrial(
  tally: TrialTally,
  cuedIndex: number,
  minShare: number,
): { outcome: 'hit' | 'miss' | 'timeout'; decidedIndex: number | null } {
  if (tally.total === 0) return { outcome: 'timeout', decidedIndex: null }
  let best = 0
  for (let i = 1; i < tally.votes.length; i++) if (tally.votes[i] > tally.votes[best]) best = i
  const tied = tally.votes.filter((v) => v === tally.votes[best]).length > 1
  if (tied || tally.votes[best] / tally.total < minShare) return { outcome: 'timeout', decidedIndex: null }
  return { outcome: best === cuedIndex ? 'hit' : 'miss', decidedIndex: best }
}
