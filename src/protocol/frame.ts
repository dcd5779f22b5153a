import type { Band } from '../model/band.js';

/** Decoder protocol version 1 frames, after CRC and syntax checks. Times are raw 32-bit decoder µs. */
export const FAULT_CODES = ['OVERRUN', 'SUPPLY', 'RESTART'] as const;
export type FaultCode = (typeof FAULT_CODES)[number];

export type HelloFrame = { type: 'HELLO'; version: 1; loops: number; firmware: string };
export type EdgeFrame = { type: 'EDGE'; seq: number; time: number; loop: number; band: Band };
export type TickFrame = { type: 'TICK'; seq: number; time: number; bands: Band[] };
export type FaultFrame = { type: 'FAULT'; seq: number; time: number; code: FaultCode };
export type Frame = HelloFrame | EdgeFrame | TickFrame | FaultFrame;

/** Why a line was dropped. Every dropped line is counted under one of these. */
export const DROP_REASONS = ['too-long', 'crc', 'syntax', 'unknown-type', 'range'] as const;
export type DropReason = (typeof DROP_REASONS)[number];

export type ParseOutcome = { ok: true; frame: Frame } | { ok: false; reason: DropReason; detail: string };

export const MAX_LINE_BYTES = 120;
export const SEQ_MODULO = 65536;
export const TIME_MODULO = 4294967296;
