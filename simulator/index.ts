// The simulator's public API for the server, the bench, the command line and tests. Pure
// parts only (no Node APIs beyond what file-mode's writers need); the live device link,
// which needs Node's WebSocket client and the wall clock, is in ./live-device.
export { createSimulatedParticipant, DEFAULT_ARTIFACTS, DEFAULT_RHYTHMS, NO_ARTIFACTS } from './generator'
export type { ArtifactSettings, CueEvent, CuePhase, RhythmSettings, SimulatedParticipant, SimulationTruth, SimulatorOptions } from './generator'
export { DEFAULT_PARTICIPANT, KNOWN_CLASSES, impliedAccuracy } from './participant'
export type { ParticipantSettings, TrialIntent, TrialOutcome } from './participant'
export { simulateRecording } from './simulated-recording'
export type { RecordingTruth, SimulatedRecordingOptions } from './simulated-recording'
export { writeSimulatedRecording, formatFromFileName } from './file-mode'
export { balancedTrialSchedule, DEFAULT_TIMING } from './schedule'
export type { TrialTiming, ScheduledTrial } from './schedule'
export { sensorimotorChannels, resolveChannels, simulatorPositionFor, MAX_SIMULATED_CHANNELS } from './channels'
export { FAULT_KINDS, NO_FAULTS } from './faults'
export type { FaultKind, FaultLogEntry, FaultSettings } from './faults'
