// Package pipeline turns a campaign file into work and does it.
//
// The flow is one way: Load parses and validates the campaign (strict
// YAML: unknown keys, bad names, cycles and out-of-range settings are
// reported with file:line:column and a hint, all at once); Expand turns the
// stage graph into the instance graph (a stage applied to one scenario,
// year block and sweep member); NewPlan asks the cache, for each instance,
// whether its recorded outputs can be reused and, if not, why it must run;
// Execute runs what must run in child processes of the same binary, at
// most -j at once, in a linear-time ready queue, and writes a run record.
//
// Stage kinds implement Kind (kind.go) and are listed explicitly in
// stages/all. The pipeline never knows a stage's science and a stage never
// sees the cache: it gets a Job with input paths and an empty OutDir.
//
// Cache key of an instance = BLAKE3 over (kind, kind version, scenario,
// block, member, canonical settings JSON, the campaign sections the kind
// reads, and the digest of every input: raw file content, or the manifest
// digest of an upstream instance's outputs). Because downstream keys use
// output digests, a change upstream that produces identical outputs stops
// the rerun there (early cutoff): the executor decides again, just before
// running, once upstream outputs are known.
//
// The dominikbraun/graph library validates the stage graph (cycle path,
// DOT), which is small; its topological sort is quadratic, so the instance
// graph (possibly 100,000 instances) is ordered by construction instead.
package pipeline
