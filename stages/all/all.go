// Package all lists every stage kind this binary knows, in one place, so
// that adding a kind is one visible line rather than an init() side effect.
package all

import (
	"github.com/squall-climate/squall/pipeline"
	"github.com/squall-climate/squall/stages/batchscripts"
	"github.com/squall-climate/squall/stages/catalog"
	"github.com/squall-climate/squall/stages/evaluate"
	"github.com/squall-climate/squall/stages/label"
	"github.com/squall-climate/squall/stages/label/agreement"
	"github.com/squall-climate/squall/stages/label/climatology"
	"github.com/squall-climate/squall/stages/normalize"
	"github.com/squall-climate/squall/stages/shard"
	"github.com/squall-climate/squall/stages/subset"
	"github.com/squall-climate/squall/stages/trends"
)

// Registry returns the stage kinds of squall, in the order a campaign
// usually uses them.
func Registry() *pipeline.Registry {
	return pipeline.NewRegistry(
		subset.Kind{},
		normalize.FitKind{},
		normalize.Kind{},
		climatology.Kind{},
		label.Kind{},
		agreement.Kind{},
		shard.Kind{},
		batchscripts.Kind{},
		evaluate.Kind{},
		catalog.Kind{},
		trends.Kind{},
	)
}
