// Property-based fuzzing of the ingest wire format (app/ingest/protocol.ts): thousands of
// generated and mutated frames and hellos. The properties: the parser never crashes with
// anything but a FrameError carrying one of the documented close codes and a readable reason,
// never hangs (each call is timed), and whatever it accepts satisfies the format's invariants.
// Close codes 4000-4999 are the application range of RFC 6455 section 7.4.2.
import fc from 'fast-check'
import { describe, expect, it } from 'vitest'
import {
  ABSURD_AMPLITUDE_UV,
  BLOCK_HEADER_BYTES,
  BLOCK_MAGIC,
  CloseCode,
  FrameError,
  MAX_BLOCK_SAMPLES,
  MAX_FRAME_BYTES,
  MAX_TEXT_FRAME_BYTES,
  closeReason,
  decodeBlock,
  deviceMessageSchema,
  encodeBlock,
  helloSchema,
  parseJsonFrame,
} from '~/ingest/protocol'

const CODES = new Set<number>(Object.values(CloseCode))
/** A single parse of a 1 MB frame takes well under this on a shared 2-core machine. */
const MAX_CALL_MS = 250

/** Runs fn; it must return or throw a FrameError with a known code and a readable reason. */
function outcome<T>(fn: () => T): { ok: true; value: T } | { ok: false; error: FrameError } {
  const started = performance.now()
  try {
    const value = fn()
    return { ok: true, value }
  } catch (error) {
    expect(error).toBeInstanceOf(FrameError)
    const e = error as FrameError
    expect(CODES.has(e.code)).toBe(true)
    expect(e.code).toBeGreaterThanOrEqual(4000)
    expect(e.code).toBeLessThan(5000)
    expect(e.message.length).toBeGreaterThan(10)
    // The reason goes into a close frame: it must fit RFC 6455's 123 bytes after closeReason().
    expect(new TextEncoder().encode(closeReason(e.message)).length).toBeLessThanOrEqual(123)
    return { ok: false, error: e }
  } finally {
    expect(performance.now() - started).toBeLessThan(MAX_CALL_MS)
  }
}

function header(seq: number, firstSample: number, channels: number, samples: number): Uint8Array {
  const bytes = new Uint8Array(BLOCK_HEADER_BYTES)
  const view = new DataView(bytes.buffer)
  view.setUint32(0, BLOCK_MAGIC, true)
  view.setUint32(4, seq >>> 0, true)
  view.setFloat64(8, firstSample, true)
  view.setUint16(16, channels, true)
  view.setUint16(18, samples, true)
  return bytes
}

/** A valid block: small enough that thousands of runs stay fast. */
const validBlock = fc
  .record({
    seq: fc.integer({ min: 0, max: 0xffffffff }),
    firstSample: fc.integer({ min: 0, max: 2 ** 40 }),
    channelCount: fc.integer({ min: 1, max: 32 }),
    sampleCount: fc.integer({ min: 1, max: 16 }),
  })
  .chain((h) =>
    fc
      .array(fc.float({ min: -1000, max: 1000, noNaN: true, noDefaultInfinity: true }), {
        minLength: h.channelCount * h.sampleCount,
        maxLength: h.channelCount * h.sampleCount,
      })
      .map((values) => ({ ...h, samples: Float32Array.from(values) })),
  )

/** Byte-level mutations of a valid frame, as a broken bridge or a bad network would make them. */
type Mutation =
  | { kind: 'flip'; at: number; mask: number }
  | { kind: 'set'; at: number; value: number }
  | { kind: 'truncate'; at: number }
  | { kind: 'extend'; extra: Uint8Array }
  | { kind: 'splice-float'; at: number; value: number }

const mutation: fc.Arbitrary<Mutation> = fc.oneof(
  fc.record({ kind: fc.constant('flip' as const), at: fc.nat(), mask: fc.integer({ min: 1, max: 255 }) }),
  fc.record({ kind: fc.constant('set' as const), at: fc.nat(), value: fc.integer({ min: 0, max: 255 }) }),
  fc.record({ kind: fc.constant('truncate' as const), at: fc.nat() }),
  fc.record({ kind: fc.constant('extend' as const), extra: fc.uint8Array({ minLength: 1, maxLength: 64 }) }),
  fc.record({
    kind: fc.constant('splice-float' as const),
    at: fc.nat(),
    value: fc.constantFrom(Number.NaN, Infinity, -Infinity, 1e9, -2e5, ABSURD_AMPLITUDE_UV * 1.01, 3.4e38),
  }),
)

function mutate(frame: Uint8Array, m: Mutation): Uint8Array {
  switch (m.kind) {
    case 'flip': {
      const out = frame.slice()
      out[m.at % out.length] ^= m.mask
      return out
    }
    case 'set': {
      const out = frame.slice()
      out[m.at % out.length] = m.value
      return out
    }
    case 'truncate':
      return frame.slice(0, m.at % frame.length)
    case 'extend': {
      const out = new Uint8Array(frame.length + m.extra.length)
      out.set(frame)
      out.set(m.extra, frame.length)
      return out
    }
    case 'splice-float': {
      const out = frame.slice()
      const floats = (out.length - BLOCK_HEADER_BYTES) >> 2
      if (floats > 0) new DataView(out.buffer).setFloat32(BLOCK_HEADER_BYTES + (m.at % floats) * 4, m.value, true)
      return out
    }
  }
}

function checkAccepted(block: ReturnType<typeof decodeBlock>, frame: Uint8Array, expectedChannels: number) {
  expect(block.channelCount).toBe(expectedChannels)
  expect(block.sampleCount).toBeGreaterThanOrEqual(1)
  expect(block.sampleCount).toBeLessThanOrEqual(MAX_BLOCK_SAMPLES)
  expect(block.samples.length).toBe(block.channelCount * block.sampleCount)
  expect(frame.byteLength).toBe(BLOCK_HEADER_BYTES + block.samples.length * 4)
  expect(Number.isSafeInteger(block.firstSample) && block.firstSample >= 0).toBe(true)
  const bad = block.samples.findIndex((v) => !Number.isFinite(v) || Math.abs(v) > ABSURD_AMPLITUDE_UV)
  expect(bad).toBe(-1)
}

describe('decodeBlock under fuzzing', () => {
  it('round-trips every valid block exactly (float32 values)', () => {
    fc.assert(
      fc.property(validBlock, (b) => {
        const frame = encodeBlock(b)
        const r = outcome(() => decodeBlock(frame, b.channelCount))
        expect(r.ok).toBe(true)
        if (!r.ok) return
        expect(r.value.seq).toBe(b.seq)
        expect(r.value.firstSample).toBe(b.firstSample)
        expect(r.value.sampleCount).toBe(b.sampleCount)
        expect(Array.from(r.value.samples)).toEqual(Array.from(b.samples))
      }),
      { numRuns: 1500 },
    )
  })

  it('survives arbitrary bytes: a FrameError with a documented code, or a block that obeys the format', () => {
    fc.assert(
      fc.property(fc.uint8Array({ maxLength: 600 }), fc.integer({ min: 0, max: 300 }), (bytes, channels) => {
        const r = outcome(() => decodeBlock(bytes, channels))
        if (r.ok) checkAccepted(r.value, bytes, channels)
      }),
      { numRuns: 3000 },
    )
  })

  it('survives arbitrary bytes behind a valid magic (the parser gets past the first check)', () => {
    fc.assert(
      fc.property(fc.uint8Array({ minLength: 20, maxLength: 800 }), fc.integer({ min: 1, max: 64 }), (tail, channels) => {
        const frame = new Uint8Array(4 + tail.length)
        new DataView(frame.buffer).setUint32(0, BLOCK_MAGIC, true)
        frame.set(tail, 4)
        const r = outcome(() => decodeBlock(frame, channels))
        if (r.ok) checkAccepted(r.value, frame, channels)
      }),
      { numRuns: 3000 },
    )
  })

  it('survives up to five mutations of a valid frame', () => {
    fc.assert(
      fc.property(validBlock, fc.array(mutation, { minLength: 1, maxLength: 5 }), (b, ms) => {
        let frame = encodeBlock(b)
        for (const m of ms) if (frame.length > 0) frame = mutate(frame, m)
        const r = outcome(() => decodeBlock(frame, b.channelCount))
        if (r.ok) checkAccepted(r.value, frame, b.channelCount)
      }),
      { numRuns: 2500 },
    )
  })

  it('maps each kind of header lie to its own close code', () => {
    fc.assert(
      fc.property(
        fc.integer({ min: 1, max: 32 }),
        fc.integer({ min: 1, max: 16 }),
        fc.constantFrom('channels', 'zero-samples', 'too-many-samples', 'negative-first', 'fraction-first', 'nan-first', 'short-body', 'long-body'),
        (channels, samples, lie) => {
          const body = (ch: number, n: number) => new Uint8Array(ch * n * 4)
          const join = (h: Uint8Array, b: Uint8Array) => {
            const out = new Uint8Array(h.length + b.length)
            out.set(h)
            out.set(b, h.length)
            return out
          }
          const cases: Record<string, [Uint8Array, number]> = {
            channels: [join(header(0, 0, channels + 1, samples), body(channels + 1, samples)), CloseCode.wrongChannelCount],
            'zero-samples': [header(0, 0, channels, 0), CloseCode.wrongSampleCount],
            'too-many-samples': [join(header(0, 0, channels, MAX_BLOCK_SAMPLES + 1 + samples), new Uint8Array(8)), CloseCode.wrongSampleCount],
            'negative-first': [join(header(0, -samples, channels, samples), body(channels, samples)), CloseCode.badFrame],
            'fraction-first': [join(header(0, samples + 0.5, channels, samples), body(channels, samples)), CloseCode.badFrame],
            'nan-first': [join(header(0, Number.NaN, channels, samples), body(channels, samples)), CloseCode.badFrame],
            'short-body': [join(header(0, 0, channels, samples), body(channels, samples).slice(1)), CloseCode.badFrame],
            'long-body': [join(header(0, 0, channels, samples), new Uint8Array(channels * samples * 4 + 4)), CloseCode.badFrame],
          }
          const [frame, code] = cases[lie]
          const r = outcome(() => decodeBlock(frame, channels))
          expect(r.ok).toBe(false)
          if (!r.ok) expect(r.error.code).toBe(code)
        },
      ),
      { numRuns: 1000 },
    )
  })

  it('refuses non-finite and absurd samples wherever they sit, naming sample and channel', () => {
    fc.assert(
      fc.property(
        fc.integer({ min: 1, max: 16 }),
        fc.integer({ min: 1, max: 16 }),
        fc.nat(),
        fc.constantFrom(Number.NaN, Infinity, -Infinity, 2e5, -1e7, 3e38),
        (channels, samples, where, bad) => {
          const values = new Float32Array(channels * samples).fill(12.5)
          const at = where % values.length
          values[at] = bad
          const r = outcome(() => decodeBlock(encodeBlock({ seq: 1, firstSample: 0, channelCount: channels, samples: values }), channels))
          expect(r.ok).toBe(false)
          if (r.ok) return
          expect(r.error.code).toBe(Number.isFinite(bad) ? CloseCode.absurdAmplitude : CloseCode.nonFiniteSamples)
          expect(r.error.message).toContain(`sample ${Math.floor(at / channels)} channel ${at % channels}`)
        },
      ),
      { numRuns: 1000 },
    )
  })

  it('refuses frames above MAX_FRAME_BYTES before reading them, quickly', () => {
    const big = new Uint8Array(MAX_FRAME_BYTES + 1)
    big.set(header(0, 0, 256, 1024))
    const r = outcome(() => decodeBlock(big, 256))
    expect(r.ok).toBe(false)
    if (!r.ok) expect(r.error.code).toBe(CloseCode.frameTooLarge)
    // The largest legal frame (256 ch x 1024 samples) parses within the time bound too.
    const largest = encodeBlock({ seq: 0, firstSample: 0, channelCount: 256, samples: new Float32Array(256 * 1024) })
    expect(largest.byteLength).toBe(MAX_FRAME_BYTES)
    expect(outcome(() => decodeBlock(largest, 256)).ok).toBe(true)
  })

  it('reads a frame that sits at an offset inside a larger buffer (as ws hands them over)', () => {
    fc.assert(
      fc.property(validBlock, fc.integer({ min: 1, max: 64 }), (b, offset) => {
        const frame = encodeBlock(b)
        const backing = new Uint8Array(offset + frame.length + 7)
        backing.set(frame, offset)
        const view = backing.subarray(offset, offset + frame.length)
        const r = outcome(() => decodeBlock(view, b.channelCount))
        expect(r.ok).toBe(true)
      }),
      { numRuns: 500 },
    )
  })
})

/** A hello that passes the schema; mutations start from it. */
const validHello = fc.record({
  type: fc.constant('hello'),
  protocol: fc.constant(1),
  token: fc.string({ minLength: 8, maxLength: 64 }),
  device: fc.string({ maxLength: 40 }),
  channels: fc.array(fc.string({ minLength: 1, maxLength: 8 }), { minLength: 1, maxLength: 64 }),
  rateHz: fc.double({ min: 1, max: 20_000, noNaN: true }),
  units: fc.constant('uV'),
})

const HELLO_KEYS = ['type', 'protocol', 'token', 'device', 'channels', 'rateHz', 'units', 'resumeRunId', 'sessionId'] as const

describe('text frames and the hello under fuzzing', () => {
  it('parseJsonFrame: any string gives a value or FrameError(badMessage)', () => {
    fc.assert(
      fc.property(fc.oneof(fc.string({ maxLength: 300 }), fc.json(), fc.string({ unit: 'binary', maxLength: 200 })), (text) => {
        const r = outcome(() => parseJsonFrame(text))
        if (!r.ok) expect(r.error.code).toBe(CloseCode.badMessage)
      }),
      { numRuns: 4000 },
    )
  })

  it('parseJsonFrame: truncated and corrupted JSON hellos are refused as badMessage', () => {
    fc.assert(
      fc.property(validHello, fc.nat(), fc.constantFrom('{', '}', '"', ',', ':', '\\', '\u0000', 'NaN'), (hello, cut, junk) => {
        const text = JSON.stringify(hello)
        const at = cut % text.length
        for (const broken of [text.slice(0, at), text.slice(0, at) + junk + text.slice(at)]) {
          const r = outcome(() => parseJsonFrame(broken))
          if (!r.ok) expect(r.error.code).toBe(CloseCode.badMessage)
        }
      }),
      { numRuns: 2000 },
    )
  })

  it('parseJsonFrame: an over-long text frame is refused before parsing (deeply nested too)', () => {
    const deep = '['.repeat(MAX_TEXT_FRAME_BYTES + 1)
    const r = outcome(() => parseJsonFrame(deep))
    expect(r.ok).toBe(false)
    if (!r.ok) expect(r.error.code).toBe(CloseCode.frameTooLarge)
    // Just under the limit, deep nesting is a parse error, not a stack overflow of the server.
    const almost = outcome(() => parseJsonFrame('['.repeat(MAX_TEXT_FRAME_BYTES - 1)))
    expect(almost.ok).toBe(false)
  })

  it('helloSchema never throws; every refusal names the field; every acceptance is a usable hello', () => {
    fc.assert(
      fc.property(fc.oneof(fc.jsonValue(), validHello.map((h) => h as unknown)), (value) => {
        const started = performance.now()
        const parsed = helloSchema.safeParse(value)
        expect(performance.now() - started).toBeLessThan(MAX_CALL_MS)
        if (parsed.success) {
          expect(parsed.data.type).toBe('hello')
          expect(parsed.data.units).toBe('uV')
          expect(parsed.data.channels.length).toBeGreaterThanOrEqual(1)
          expect(parsed.data.rateHz).toBeGreaterThan(0)
        } else {
          for (const issue of parsed.error.issues) expect(issue.message.length).toBeGreaterThan(3)
        }
      }),
      { numRuns: 3000 },
    )
  })

  it('helloSchema: a wrong value in any one field of a valid hello is refused on that field', () => {
    // Values each field must refuse (the schema's own limits in app/ingest/protocol.ts).
    const bad: Record<(typeof HELLO_KEYS)[number], unknown[]> = {
      type: ['Hello', 'marker', '', null, 1, undefined],
      protocol: [1.5, '1', null, Number.NaN, Infinity, undefined, [1]],
      token: ['short', 'x'.repeat(201), 12345678, null, undefined, {}],
      device: ['d'.repeat(201), 5, null, ['a']],
      channels: [[], [''], ['x'.repeat(33)], Array.from({ length: 257 }, (_, i) => `C${i}`), 'Cz', [1], null, undefined],
      rateHz: [0, -1, Number.NaN, 20_001, Infinity, '500', null, undefined],
      units: ['mV', 'V', 'uv', null, undefined, 1],
      resumeRunId: ['not-a-uuid', 5, '', null],
      sessionId: ['x', 7, '', null],
    }
    const cases = fc.constantFrom(...HELLO_KEYS).chain((key) => fc.tuple(fc.constant(key), fc.constantFrom(...bad[key])))
    fc.assert(
      fc.property(validHello, cases, (hello, [key, value]) => {
        const parsed = helloSchema.safeParse({ ...hello, [key]: value })
        expect(parsed.success).toBe(false)
        if (!parsed.success) expect(parsed.error.issues.some((i) => i.path[0] === key)).toBe(true)
      }),
      { numRuns: 3000 },
    )
  })

  it('device messages (marker, bye): arbitrary JSON is parsed or refused, never thrown', () => {
    fc.assert(
      fc.property(
        fc.oneof(
          fc.jsonValue(),
          fc.record({ type: fc.constantFrom('marker', 'bye', 'hello', ''), sample: fc.oneof(fc.integer(), fc.double()), label: fc.string({ maxLength: 250 }) }),
        ),
        (value) => {
          const parsed = deviceMessageSchema.safeParse(value)
          if (parsed.success && parsed.data.type === 'marker') {
            expect(Number.isInteger(parsed.data.sample) && parsed.data.sample >= 0).toBe(true)
            expect(parsed.data.label.length).toBeGreaterThan(0)
          }
        },
      ),
      { numRuns: 3000 },
    )
  })
})
