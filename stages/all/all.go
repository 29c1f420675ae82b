// Package all lists every stage kind this binary knows, in one place, so
// that adding a kind is one visible line rather than an init() side effect.
package all

import (
	"github.com/squall-climate/squall/pipeline"
	"github.com/squall-climate/squall/stages/catalog"
	"github.com/squall-climate/squall/stages/evaluate"
)

// Registry returns the stage kinds of squall.
func Registry() *pipeline.Registry {
	return pipeline.NewRegistry(
		catalog.Kind{},
		evaluate.Kind{},
	)
}
