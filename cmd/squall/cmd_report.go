package main

import "github.com/squall-climate/squall/pipeline"

// writeReport writes the HTML report of a run (wired to stages/report).
func writeReport(e *env, rec *pipeline.RunRecord, path string) (string, error) {
	return "", nil
}
