// Ingest protocol v1: the one module that owns the wire format between a device link
// (amplifier bridge or simulator) and the server. docs/ingest-protocol.md documents it
// for people writing bridges; this file is the executable form. Pure: no Node APIs, so
// the server, the simulator and tests all share it.
import { z } from 'zod'

export const PROTOCOL_VERSION = 1

/** ASCII "TBLK" read as a little-endian uint32. */
export const BLOCK_MAGIC = 0x4b4c4254
export const BLOCK_HEADER_BYTES = 24
export const MAX_CHANNELS = 256
export const MAX_BLOCK_SAMPLES = 1024
/** Largest binary frame the server accepts (header + 256 ch x 1024 samples x 4 bytes). */
export const MAX_FRAME_BYTES = BLOCK_HEADER_BYTES + MAX_CHANNELS * MAX_BLOCK_SAMPLES * 4
export const MAX_TEXT_FRAME_BYTES = 64 * 1024

/**
 * Close codes sent by the server. 1000/1001 are the WebSocket standard's; the 4xxx range is
 * reserved by RFC 6455 for applications. The reason string always names what was wrong.
 */
export const CloseCode = {
  normal: 1000,
  goingAway: 1001,
  /** No hello within the time limit, or a block before hello. */
  helloRequired: 4000,
  /** Hello was not valid JSON or did not match the schema. */
  badHello: 4001,
  /** Protocol version not supported. */
  badVersion: 4002,
  /** Missing, unknown, malformed token. */
  unauthorized: 4401,
  /** Token expired. */
  tokenExpired: 4402,
  /** Token revoked. */
  tokenRevoked: 4403,
  /** Session ended or not accepting a device. */
  sessionClosed: 4404,
  /** Another device link is already streaming for this session. */
  alreadyConnected: 4409,
  /** Channel names, count or rate do not match the session's montage. */
  montageMismatch: 4422,
  /** Binary frame too short, wrong magic, or its length does not match its header. */
  badFrame: 4430,
  /** Frame over MAX_FRAME_BYTES / MAX_TEXT_FRAME_BYTES. */
  frameTooLarge: 4431,
  /** Block's channel count differs from the hello. */
  wrongChannelCount: 4432,
  /** Sample count zero or above MAX_BLOCK_SAMPLES. */
  wrongSampleCount: 4433,
  /** NaN or infinite sample values. */
  nonFiniteSamples: 4434,
  /** Sample amplitude beyond the physical range of EEG amplifiers. */
  absurdAmplitude: 4435,
  /** First-sample index went backwards beyond the reorder window. */
  timeBackwards: 4436,
  /** Too many frames per second (flood of tiny frames). */
  rateLimited: 4437,
  /** Text message not valid JSON or of an unknown type. */
  badMessage: 4438,
  /** Device sends too slowly to keep the session live. */
  tooSlow: 4439,
  /** The server is shutting down; reconnect later. */
  serverShutdown: 4500,
  /** Decoding is not available for this session yet. */
  notReady: 4503,
} as const
export type CloseCodeName = keyof typeof CloseCode

/** Amplitudes beyond this (microvolts) are not EEG: a unit mistake or a broken bridge. */
export const ABSURD_AMPLITUDE_UV = 100_000

export const helloSchema = z.object({
  type: z.literal('hello'),
  protocol: z.number().int(),
  token: z.string().min(8).max(200),
  device: z.string().max(200).default('unnamed device'),
  channels: z.array(z.string().min(1).max(32)).min(1).max(MAX_CHANNELS),
  rateHz: z.number().positive().max(20_000),
  units: z.literal('uV'),
  /** When reconnecting: continue this run instead of waiting for a new one. */
  resumeRunId: z.string().uuid().optional(),
  /** Optional check: the session the bridge means to stream to. A token of another session is refused. */
  sessionId: z.string().uuid().optional(),
})
export type Hello = z.infer<typeof helloSchema>

export const markerSchema = z.object({
  type: z.literal('marker'),
  sample: z.number().int().nonnegative(),
  label: z.string().min(1).max(200),
})
export const byeSchema = z.object({ type: z.literal('bye') })
export const deviceMessageSchema = z.discriminatedUnion('type', [markerSchema, byeSchema])
export type DeviceMessage = z.infer<typeof deviceMessageSchema>

/** Messages the server sends to the device link (JSON text frames). */
export type ServerMessage =
  | { type: 'welcome'; protocol: number; sessionId: string; runId: string | null; nextSample: number }
  | { type: 'run'; runId: string | null; kind: 'calibration' | 'feedback' | null; state: string }
  | { type: 'cue'; runId: string; trial: number; label: string; phase: 'fixation' | 'cue' | 'imagery' | 'rest' | 'end'; atSample: number }
  | { type: 'ack'; durableSeq: number; durableSample: number }
  | { type: 'warning'; code: string; detail: string }
  | { type: 'error'; code: number; reason: string }

export interface SampleBlock {
  seq: number
  firstSample: number
  channelCount: number
  sampleCount: number
  /** Interleaved, sample-major: samples[s * channelCount + c], microvolts. */
  samples: Float32Array
}

export class FrameError extends Error {
  constructor(
    readonly code: number,
    message: string,
  ) {
    super(message)
  }
}

/**
 * Header (little-endian): 0 u32 magic "TBLK" · 4 u32 seq · 8 f64 firstSample (integer) ·
 * 16 u16 channelCount · 18 u16 sampleCount · 20 u32 reserved (0) · 24 float32 samples.
 */
export function encodeBlock(block: Omit<SampleBlock, 'channelCount' | 'sampleCount'> & { channelCount: number }): Uint8Array {
  const sampleCount = block.samples.length / block.channelCount
  const bytes = new Uint8Array(BLOCK_HEADER_BYTES + block.samples.length * 4)
  const view = new DataView(bytes.buffer)
  view.setUint32(0, BLOCK_MAGIC, true)
  view.setUint32(4, block.seq >>> 0, true)
  view.setFloat64(8, block.firstSample, true)
  view.setUint16(16, block.channelCount, true)
  view.setUint16(18, sampleCount, true)
  view.setUint32(20, 0, true)
  for (let i = 0; i < block.samples.length; i++) view.setFloat32(BLOCK_HEADER_BYTES + i * 4, block.samples[i], true)
  return bytes
}

/** Parses and validates one binary frame. Throws FrameError with the close code to use. */
export function decodeBlock(frame: Uint8Array, expectedChannels: number): SampleBlock {
  if (frame.byteLength > MAX_FRAME_BYTES) throw new FrameError(CloseCode.frameTooLarge, `frame of ${frame.byteLength} bytes exceeds ${MAX_FRAME_BYTES}`)
  if (frame.byteLength < BLOCK_HEADER_BYTES) throw new FrameError(CloseCode.badFrame, `frame of ${frame.byteLength} bytes is shorter than the ${BLOCK_HEADER_BYTES}-byte header`)
  const view = new DataView(frame.buffer, frame.byteOffset, frame.byteLength)
  if (view.getUint32(0, true) !== BLOCK_MAGIC) throw new FrameError(CloseCode.badFrame, 'frame does not start with the TBLK magic')
  const seq = view.getUint32(4, true)
  const firstSample = view.getFloat64(8, true)
  const channelCount = view.getUint16(16, true)
  const sampleCount = view.getUint16(18, true)
  if (!Number.isSafeInteger(firstSample) || firstSample < 0) throw new FrameError(CloseCode.badFrame, `first sample index ${firstSample} is not a non-negative integer`)
  if (channelCount !== expectedChannels) throw new FrameError(CloseCode.wrongChannelCount, `block has ${channelCount} channels, hello declared ${expectedChannels}`)
  if (sampleCount === 0 || sampleCount > MAX_BLOCK_SAMPLES) throw new FrameError(CloseCode.wrongSampleCount, `block has ${sampleCount} samples; allowed 1..${MAX_BLOCK_SAMPLES}`)
  const expectedBytes = BLOCK_HEADER_BYTES + channelCount * sampleCount * 4
  if (frame.byteLength !== expectedBytes) throw new FrameError(CloseCode.badFrame, `frame is ${frame.byteLength} bytes; header implies ${expectedBytes}`)
  const samples = readFloat32LE(frame, BLOCK_HEADER_BYTES, channelCount * sampleCount)
  for (let i = 0; i < samples.length; i++) {
    const v = samples[i]
    if (!Number.isFinite(v)) throw new FrameError(CloseCode.nonFiniteSamples, `sample ${Math.floor(i / channelCount)} channel ${i % channelCount} is ${v}`)
    if (Math.abs(v) > ABSURD_AMPLITUDE_UV) throw new FrameError(CloseCode.absurdAmplitude, `sample ${Math.floor(i / channelCount)} channel ${i % channelCount} is ${v} uV, beyond ±${ABSURD_AMPLITUDE_UV} uV`)
  }
  return { seq, firstSample, channelCount, sampleCount, samples }
}

const LITTLE_ENDIAN_PLATFORM = new Uint8Array(new Uint16Array([1]).buffer)[0] === 1

/** Copies `count` little-endian float32 values starting at `offset` into a new array. */
function readFloat32LE(frame: Uint8Array, offset: number, count: number): Float32Array {
  if (LITTLE_ENDIAN_PLATFORM) {
    // One aligned copy of the bytes; the platform's own float layout is the wire's.
    const out = new Float32Array(count)
    new Uint8Array(out.buffer).set(frame.subarray(offset, offset + count * 4))
    return out
  }
  const view = new DataView(frame.buffer, frame.byteOffset, frame.byteLength)
  const out = new Float32Array(count)
  for (let i = 0; i < count; i++) out[i] = view.getFloat32(offset + i * 4, true)
  return out
}

/** Parses a JSON text frame; throws FrameError(badMessage) with a readable reason. */
export function parseJsonFrame(text: string): unknown {
  if (text.length > MAX_TEXT_FRAME_BYTES) throw new FrameError(CloseCode.frameTooLarge, `text frame of ${text.length} characters exceeds ${MAX_TEXT_FRAME_BYTES}`)
  try {
    return JSON.parse(text)
  } catch {
    throw new FrameError(CloseCode.badMessage, 'text frame is not valid JSON')
  }
}

/** Close reasons are limited to 123 bytes by RFC 6455. */
export function closeReason(message: string): string {
  const encoder = new TextEncoder()
  let out = message
  while (encoder.encode(out).length > 123) out = out.slice(0, -1)
  return out
}
