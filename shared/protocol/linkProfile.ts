/**
 * Link profiles: how to talk to one instrument — serial settings, framing, talk-only or query
 * mode, and how to turn a line into a number. Stored with instruments and chosen on the bench.
 */
import { z } from 'zod';

/** Serial line settings, in the shape Web Serial's `SerialPort.open()` takes. */
export const SerialSettings = z.object({
  baudRate: z.number().int().min(50).max(4_000_000),
  dataBits: z.union([z.literal(7), z.literal(8)]),
  parity: z.enum(['none', 'even', 'odd']),
  stopBits: z.union([z.literal(1), z.literal(2)]),
  flowControl: z.enum(['none', 'hardware']),
});
export type SerialSettings = z.infer<typeof SerialSettings>;

/** `CR`, `LF`, `CRLF`, `auto` (any of them), or a literal string of 1–4 characters. */
export const TerminatorSetting = z.union([
  z.enum(['CR', 'LF', 'CRLF', 'auto']),
  z.string().min(1).max(4),
]);

/** Where a `hex-spi` reply's value sits and how to scale it. */
export const HexSpiField = z.object({
  /** Byte offset of the value in the MISO reply (the address byte's slot is offset 0). */
  offset: z.number().int().min(0).max(63),
  bigEndian: z.boolean(),
  /** Profile units per digit, e.g. 0.0625 (mg per digit). */
  scale: z.number().positive(),
});
export type HexSpiField = z.infer<typeof HexSpiField>;

export const SimulatorTarget = z.object({
  path: z.enum(['/sim/counter', '/sim/spi-bridge']),
  params: z
    .record(z.string().max(40), z.string().max(200))
    .refine((r) => Object.keys(r).length <= 20, 'holds at most 20 parameters'),
});
export type SimulatorTarget = z.infer<typeof SimulatorTarget>;

export const LinkProfile = z
  .object({
    name: z.string().min(1).max(80),
    kind: z.enum(['serial', 'simulator']),
    serial: SerialSettings,
    terminator: TerminatorSetting,
    /** Terminator appended to every command written (query mode). */
    writeTerminator: z.enum(['CR', 'LF', 'CRLF']),
    mode: z.enum(['talk', 'query']),
    /** The poll command in query mode (e.g. `READ?`, or a hex line for the SPI bridge). */
    queryCommand: z.string().max(200),
    /** Sent once, in order, before polling starts (replies read and discarded). */
    initCommands: z.array(z.string().max(200)).max(20),
    /** Minimum time between poll starts; 0 polls back-to-back (a `READ?` takes a gate). */
    intervalMs: z.number().int().min(0).max(3_600_000),
    timeoutMs: z.number().int().min(10).max(600_000),
    retries: z.number().int().min(0).max(10),
    parseRule: z.enum(['number', 'number-with-unit', 'hex-spi']),
    quantity: z.enum(['frequency', 'acceleration', 'voltage', 'time', 'counts']),
    /** The unit readings are stored in (Hz, mg, g, V, s, …). */
    unit: z.string().max(12),
    hexSpi: HexSpiField.optional(),
    simulator: SimulatorTarget.optional(),
  })
  .refine((p) => p.mode === 'talk' || p.queryCommand.trim() !== '', {
    message: 'query mode needs a query command',
    path: ['queryCommand'],
  })
  .refine((p) => p.parseRule !== 'hex-spi' || p.hexSpi !== undefined, {
    message: 'the hex-spi rule needs the value field (offset, endianness, scale)',
    path: ['hexSpi'],
  })
  .refine((p) => p.kind !== 'simulator' || p.simulator !== undefined, {
    message: 'a simulator link needs its path and parameters',
    path: ['simulator'],
  });
export type LinkProfile = z.infer<typeof LinkProfile>;

/**
 * 8 data bits, no parity, 1 stop bit at 115200 baud: what current USB-serial instruments
 * default to (common practice, no source); the rate hardly matters over USB CDC.
 */
const USB_8N1: SerialSettings = {
  baudRate: 115200,
  dataBits: 8,
  parity: 'none',
  stopBits: 1,
  flowControl: 'none',
};

export interface LinkPreset {
  id: 'scpi-counter' | 'talk-counter' | 'spi-bridge';
  label: string;
  profile: LinkProfile;
}

/** Starting points for the bench's link form; every field stays editable. */
export const LINK_PRESETS: readonly LinkPreset[] = [
  {
    id: 'scpi-counter',
    label: 'SCPI counter (query)',
    profile: {
      name: 'SCPI counter (query)',
      kind: 'serial',
      serial: USB_8N1,
      // Instruments answer with CR LF or LF depending on make: accept either.
      terminator: 'auto',
      writeTerminator: 'LF', // IEEE 488.2 program message terminator
      mode: 'query',
      queryCommand: 'READ?',
      initCommands: [],
      intervalMs: 0, // READ? itself takes one gate time: poll back-to-back
      // Must outlast the longest gate (100 s) plus margin; the bench shortens it from the gate.
      timeoutMs: 5000,
      retries: 2,
      parseRule: 'number-with-unit',
      quantity: 'frequency',
      unit: 'Hz',
    },
  },
  {
    id: 'talk-counter',
    label: 'Streaming counter (talk-only)',
    profile: {
      name: 'Streaming counter (talk-only)',
      kind: 'serial',
      // Older talk-only counters commonly stream at 9600 8N1 (common practice, no source).
      serial: { ...USB_8N1, baudRate: 9600 },
      terminator: 'auto',
      writeTerminator: 'LF',
      mode: 'talk',
      queryCommand: '',
      initCommands: [],
      intervalMs: 0,
      timeoutMs: 5000,
      retries: 0,
      parseRule: 'number-with-unit',
      quantity: 'frequency',
      unit: 'Hz',
    },
  },
  {
    id: 'spi-bridge',
    label: 'SPI bridge (hex lines)',
    profile: {
      name: 'SPI bridge (hex lines)',
      kind: 'serial',
      serial: USB_8N1,
      terminator: 'auto',
      writeTerminator: 'LF',
      mode: 'query',
      // Driftbench's simulated accelerometer (DBX-3): stream-read Z1, Z0 (register 0x0C · 4 + read 2 + stream 1).
      queryCommand: '33 00 00',
      // Start measuring at ±2 g (MODE, register 0x04, command 0x10 ← RUN).
      initCommands: ['10 01'],
      intervalMs: 100,
      timeoutMs: 1000,
      retries: 2,
      parseRule: 'hex-spi',
      quantity: 'acceleration',
      unit: 'mg',
      hexSpi: { offset: 1, bigEndian: true, scale: 0.0625 },
    },
  },
];

/** A link preset by id (throws for unknown ids: presets are code, not user input). */
export function linkPreset(id: LinkPreset['id']): LinkProfile {
  const p = LINK_PRESETS.find((x) => x.id === id);
  if (!p) throw new RangeError(`unknown link preset ${id}`);
  return structuredClone(p.profile);
}
