package all_test

// FuzzCampaign feeds arbitrary bytes to the campaign parser and validator
// with every real stage kind registered. Properties: it never panics; a
// refusal is an *InvalidError whose message names the file and does not
// come from a kind's checker panicking ("internal error"); an accepted
// campaign has only safe names, an absolute clean store path, and expands
// without panicking; and parsing writes nothing to disk.
//
// `go test ./stages/all` runs the committed seed corpus
// (testdata/fuzz/FuzzCampaign) plus the seeds added below; a longer run:
//
//	go test -run '^$' -fuzz FuzzCampaign -fuzztime 10m ./stages/all

import (
	"errors"
	"io/fs"
	"os"
	"path/filepath"
	"regexp"
	"sort"
	"strings"
	"testing"

	"github.com/squall-climate/squall/pipeline"
	"github.com/squall-climate/squall/stages/all"
)

// safeName is the rule pipeline/campaign.go applies to every name.
var safeName = regexp.MustCompile(`^[a-z0-9][a-z0-9_-]{0,63}$`)

// fuzzTree lays out the files campaigns in the corpus refer to: raw files
// (empty; the parser only globs them), truth masks, a GeoJSON region file
// and a site profile.
func fuzzTree(f *testing.F) string {
	dir := f.TempDir()
	files := map[string]string{
		"data/control/fields_1990.nc": "", "data/control/fields_1991.nc": "", "data/control/fields_1992.nc": "",
		"data/warm/fields_2070.nc": "", "data/warm/fields_2071.nc": "",
		"world/control/fields_1991.nc": "", "world/control/fields_1992.nc": "",
		"world/warm/fields_2071.nc": "", "world/warm/fields_2072.nc": "",
		"world/control/truth_1991.nc": "", "world/control/truth_1992.nc": "",
		"world/warm/truth_2071.nc": "", "world/warm/truth_2072.nc": "",
		"world/regions.geojson": `{"type": "FeatureCollection", "features": [{"type": "Feature", "properties": {"name": "basin"},
			"geometry": {"type": "Polygon", "coordinates": [[[100, 0], [120, 0], [120, 10], [100, 0]]]}}]}`,
		"site-workstation.yaml": "engine: local\nnode: {cores: 2}\nwalltime: 48h\n",
	}
	for p, content := range files {
		full := filepath.Join(dir, p)
		os.MkdirAll(filepath.Dir(full), 0o755)
		if err := os.WriteFile(full, []byte(content), 0o644); err != nil {
			f.Fatal(err)
		}
	}
	return dir
}

func listTree(dir string) string {
	var paths []string
	filepath.WalkDir(dir, func(p string, d fs.DirEntry, err error) error {
		if err == nil {
			paths = append(paths, p)
		}
		return nil
	})
	sort.Strings(paths)
	return strings.Join(paths, "\n")
}

func FuzzCampaign(f *testing.F) {
	dir := fuzzTree(f)
	file := filepath.Join(dir, "campaign.yaml")
	if demo, err := os.ReadFile("../../examples/demo/campaign.yaml"); err == nil {
		f.Add(demo)
	}
	reg := all.Registry()
	before := listTree(dir)
	f.Fuzz(func(t *testing.T, data []byte) {
		c, err := pipeline.Parse(file, data, reg)
		if err != nil {
			var inv *pipeline.InvalidError
			if !errors.As(err, &inv) {
				t.Fatalf("refusal is %T, want *pipeline.InvalidError (exit code 2): %v", err, err)
			}
			msg := err.Error()
			if strings.Contains(msg, "internal error") {
				t.Fatalf("a stage kind's checker panicked: %v", err)
			}
			if !strings.Contains(msg, file) {
				t.Fatalf("message does not name the file: %v", err)
			}
			var specs pipeline.SpecErrors
			if errors.As(err, &specs) {
				for _, e := range specs {
					if e.File != file || e.Msg == "" {
						t.Fatalf("spec error without file or message: %+v", e)
					}
				}
			}
		} else {
			names := []string{c.Info.Name}
			for _, sc := range c.Scenarios {
				names = append(names, sc.Name)
			}
			for _, st := range c.Stages {
				names = append(names, st.Name)
			}
			for _, ch := range c.Info.Channels {
				names = append(names, ch.Name)
			}
			for _, r := range c.Info.Regions {
				names = append(names, r.Name)
			}
			for _, n := range names {
				if !safeName.MatchString(n) {
					t.Fatalf("accepted an unsafe name %q", n)
				}
			}
			if !filepath.IsAbs(c.StoreDir) || filepath.Clean(c.StoreDir) != c.StoreDir {
				t.Fatalf("store path %q is not absolute and clean", c.StoreDir)
			}
			if _, err := c.Expand(); err != nil {
				var inv *pipeline.InvalidError
				if !errors.As(err, &inv) {
					t.Fatalf("expansion error is %T, want *pipeline.InvalidError: %v", err, err)
				}
			}
		}
		if after := listTree(dir); after != before {
			t.Fatalf("parsing changed the disk:\n%s\n->\n%s", before, after)
		}
	})
}
