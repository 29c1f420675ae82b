// Package demo holds the demo campaign on the invented world: the campaign
// file users copy from and two site profiles. `squall demo` writes them
// next to a generated world and runs the campaign.
package demo

import "embed"

//go:embed campaign.yaml site-workstation.yaml site-cluster.yaml
var files embed.FS

// Files returns the demo's files by name.
func Files() map[string][]byte {
	out := map[string][]byte{}
	for _, n := range []string{"campaign.yaml", "site-workstation.yaml", "site-cluster.yaml"} {
		b, err := files.ReadFile(n)
		if err != nil {
			panic(err) // embedded at build time
		}
		out[n] = b
	}
	return out
}
