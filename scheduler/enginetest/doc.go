// Package enginetest is the conformance suite every scheduler engine
// passes (Run), golden-file helpers (Golden, GoldenSpecs, GoldenProfile),
// a shellcheck gate (ShellCheck), and a fake batch system (Fake) that lets
// engines without a real one here run the same suite: the engine's test
// binary doubles as its submit/status/cancel commands and maps them onto
// the local engine. Costs: Run submits about ten short jobs.
package enginetest
