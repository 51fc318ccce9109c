import type { Arbitrary } from 'fast-check';

export type Edit =
  | { kind: 'set'; pos: number; byte: number }
  | { kind: 'flip'; pos: number; bit: number }
  | { kind: 'truncate'; pos: number }
  | { kind: 'insert'; pos: number; bytes: Uint8Array }
  | { kind: 'delete'; pos: number; len: number }
  | { kind: 'repeat'; pos: number; len: number; times: number }
  | { kind: 'char'; pos: number; ch: string };

export interface FuzzCase { fixture: string; edits: Edit[] }

export const FUZZ_FIXTURES: string[];
export const editArb: Arbitrary<Edit>;
export const caseArb: Arbitrary<FuzzCase>;
export function applyEdits(src: Uint8Array, edits: Edit[]): Uint8Array;
export function extensionOf(name: string): string;
