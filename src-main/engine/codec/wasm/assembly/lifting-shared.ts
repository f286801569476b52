// The lifting kernels (./lifting.ts) built on a shared memory (scripts/build.mjs: names ending -shared), so a
// plane arena (../arena.ts) can be worked on by two threads at once. Same code, same bits.
export * from "./lifting";
