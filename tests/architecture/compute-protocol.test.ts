// The compute worker owns the image session (docs/developers.md; issue 18, "messages carry ids
// and regions, never pixels, after the file is opened once"): only the calls that open a file or
// belong to no session may carry pixels or bytes. Checked on the protocol's argument types, so a
// call that takes a GreyImage or a typed array fails the type check (`npx tsc --noEmit -p .`,
// which covers tests/); the browser tests check the messages themselves (tests/e2e/browser.ts,
// recordComputeCalls).
import { expectTypeOf, test } from 'vitest';
import type { CallArgs, CallName } from '../../components/compute-protocol';

/** True when a type holds an ArrayBuffer or a typed array anywhere (a GreyImage's pixels, a file's bytes). */
type HoldsArrays<T, Depth extends unknown[] = []> = Depth['length'] extends 8
  ? false
  : T extends ArrayBufferView | ArrayBufferLike
    ? true
    : T extends object
      ? true extends { [K in keyof T]-?: HoldsArrays<T[K], [...Depth, 0]> }[keyof T] ? true : false
      : false;

/** The calls whose arguments can carry pixels or bytes. */
type CallsWithArrays = { [K in CallName]: true extends HoldsArrays<CallArgs<K>> ? K : never }[CallName];

test('only opening a file carries bytes', () => {
  // openImage: the file (a Blob, read by the worker where it lies) or its bytes, sent once to open its session
  expectTypeOf<CallsWithArrays>().toEqualTypeOf<'openImage'>();
});

test('the check sees pixels wherever they are in the arguments', () => {
  expectTypeOf<true extends HoldsArrays<{ sessionId: string; image: { data: Float32Array } }> ? 1 : 0>().toEqualTypeOf<1>();
  expectTypeOf<true extends HoldsArrays<{ a?: { b: Uint8Array[] } | null }> ? 1 : 0>().toEqualTypeOf<1>();
  expectTypeOf<true extends HoldsArrays<{ sessionId: string; rect: { x: number }; settings?: Record<string, unknown> }> ? 1 : 0>().toEqualTypeOf<0>();
  // a Blob is the file, read where it lies: it holds no array until read
  expectTypeOf<true extends HoldsArrays<{ file: Blob; fileName: string }> ? 1 : 0>().toEqualTypeOf<0>();
});
