package ncio

import (
	"fmt"
	"sort"
	"strings"
)

// Conventions is the CF version squall writes.
const Conventions = "CF-1.13"

// Provenance is what the history attribute of a squall output says: which
// tool and stage kind made it, with which settings, from which inputs. It
// holds no wall-clock time, so identical runs give identical files.
type Provenance struct {
	Tool        string            // e.g. "squall 0.3.0"
	Kind        string            // stage kind name, e.g. "subset"
	KindVersion string            // the kind's Version()
	Settings    map[string]string // canonical setting values, printed sorted by name
	Inputs      []InputDigest     // printed in the given order
}

// InputDigest names an input file and its content digest.
type InputDigest struct {
	Name, Digest string
}

// String formats the provenance as one line per part:
//
//	squall 0.3.0: stage kind subset version 2
//	settings: levels_pa=85000,50000; years=1990
//	input: tas.nc blake3:1f2e...
func (p Provenance) String() string {
	var b strings.Builder
	fmt.Fprintf(&b, "%s: stage kind %s version %s", p.Tool, p.Kind, p.KindVersion)
	if len(p.Settings) > 0 {
		keys := make([]string, 0, len(p.Settings))
		for k := range p.Settings {
			keys = append(keys, k)
		}
		sort.Strings(keys)
		parts := make([]string, len(keys))
		for i, k := range keys {
			parts[i] = k + "=" + p.Settings[k]
		}
		b.WriteString("\nsettings: " + strings.Join(parts, "; "))
	}
	for _, in := range p.Inputs {
		fmt.Fprintf(&b, "\ninput: %s %s", in.Name, in.Digest)
	}
	return b.String()
}

// PutConventions writes the global attributes every squall output
// carries: Conventions = "CF-1.13", title, and history from p.
func (w *Writer) PutConventions(title string, p Provenance) error {
	if err := w.PutGlobalAttr("Conventions", Conventions); err != nil {
		return err
	}
	if title != "" {
		if err := w.PutGlobalAttr("title", title); err != nil {
			return err
		}
	}
	return w.PutGlobalAttr("history", p.String())
}
