// The PFFFT WebAssembly package ships no types; src/image/pffft.ts describes what it uses.
declare module '@echogarden/pffft-wasm/simd' {
  const factory: (options?: object) => Promise<unknown>;
  export default factory;
}
declare module '@echogarden/pffft-wasm' {
  const factory: (options?: object) => Promise<unknown>;
  export default factory;
}
