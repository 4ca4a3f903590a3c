// Property tests run the same cases on every machine: a failure in CI reproduces locally.
// Override with FC_SEED to explore other cases.
import fc from "fast-check";

fc.configureGlobal({ seed: Number(process.env.FC_SEED ?? 20261201) });
