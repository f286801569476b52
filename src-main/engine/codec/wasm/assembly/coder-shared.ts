// The coefficient coder (./coder.ts) built on a shared memory (scripts/build.mjs: names ending -shared), for a
// plane arena (../arena.ts) on a shared memory. Same code, same bytes.
export * from "./coder";
