// Time the WebAssembly build of bench/wasm-solve in node (V8, the engine
// of Chromium), with the protocol of its native twin
// (bench/wasm-solve/src/bin/time_native.rs). Prints JSON.
// Usage: node bench/wasm_solve.mjs path/to/tussock_wasm_bench.wasm
import { readFileSync } from "node:fs";
import { performance } from "node:perf_hooks";

const bytes = readFileSync(process.argv[2]);
const { instance } = await WebAssembly.instantiate(bytes, {});
const x = instance.exports;

function secondsPerCall(f, rounds) {
  const probe = performance.now();
  let answer = f();
  const per = (performance.now() - probe) / 1000;
  const reps = Math.min(100000, Math.max(1, Math.floor(0.2 / Math.max(per, 1e-9))));
  const times = [];
  for (let r = 0; r < rounds; r++) {
    const start = performance.now();
    for (let k = 0; k < reps; k++) answer = f();
    times.push((performance.now() - start) / 1000 / reps);
  }
  times.sort((a, b) => a - b);
  return { seconds: times[Math.floor(times.length / 2)], answer };
}

console.log(JSON.stringify({
  standard: secondsPerCall(x.standard_problem, 15),
  rosenzweig_macarthur: secondsPerCall(x.rosenzweig_macarthur_1000, 15),
  library_alone: secondsPerCall(x.library_alone, 15),
  ensemble: secondsPerCall(x.ensemble_exact_1000, 3),
}));
