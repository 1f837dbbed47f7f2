// Which annotations of a file are cues. Tiller writes a cue as an annotation whose text is
// the class name and which has no duration field; every other annotation gets a duration
// (possibly 0), so its own files read back exactly. For other files the caller can name the
// class labels (e.g. ['T1', 'T2'] or ['left', 'right']).

import type { Annotation, Cue } from '../recording'

export interface CueRule {
  /** Annotation texts that are cue class names; when given, only these become cues. */
  cueLabels?: readonly string[]
}

const CLASS_NAME = /^[A-Za-z0-9_./-]{1,32}$/

/**
 * Splits annotations into cues and the rest. `withoutDuration[i]` says whether annotation i
 * had no duration in the file (CSV cue cells and EDF+ TALs without 0x15 field).
 * Cue onsets outside the recording stay annotations, so nothing is dropped.
 */
export function cuesFromAnnotations(
  annotations: readonly Annotation[], withoutDuration: readonly boolean[], rateHz: number, sampleCount: number, rule: CueRule,
): { cues: Cue[]; annotations: Annotation[] } {
  const labels = rule.cueLabels ? new Set(rule.cueLabels.map((l) => l.trim())) : undefined
  const cues: Cue[] = []
  const rest: Annotation[] = []
  annotations.forEach((a, i) => {
    const text = a.text.trim()
    const isCue = labels ? labels.has(text) : withoutDuration[i] && CLASS_NAME.test(text)
    const sample = Math.round(a.onsetSeconds * rateHz)
    if (isCue && sample >= 0 && sample < sampleCount) cues.push({ sample, label: text })
    else rest.push(a)
  })
  cues.sort((a, b) => a.sample - b.sample)
  return { cues, annotations: rest }
}
