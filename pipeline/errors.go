package pipeline

import (
	"fmt"
	"strings"
)

// SpecError is a mistake in a campaign file, located to the line.
type SpecError struct {
	File  string
	Line  int
	Col   int
	Field string // dotted path, e.g. stages.label.settings.ivt_threshold
	Msg   string
	Hint  string
}

func (e *SpecError) Error() string {
	var b strings.Builder
	b.WriteString(e.File)
	if e.Line > 0 {
		fmt.Fprintf(&b, ":%d:%d", e.Line, e.Col)
	}
	b.WriteString(": ")
	if e.Field != "" {
		b.WriteString(e.Field + ": ")
	}
	b.WriteString(e.Msg)
	if e.Hint != "" {
		b.WriteString(" (" + e.Hint + ")")
	}
	return b.String()
}

// SpecErrors is every mistake found in one campaign file; the loader keeps
// going after the first so a user fixes them in one pass.
type SpecErrors []*SpecError

func (es SpecErrors) Error() string {
	lines := make([]string, len(es))
	for i, e := range es {
		lines[i] = e.Error()
	}
	return strings.Join(lines, "\n")
}

// InvalidError wraps anything that makes a campaign unusable (a bad file,
// a glob that matches nothing), so the CLI maps it to one exit code.
type InvalidError struct{ Err error }

func (e *InvalidError) Error() string { return e.Err.Error() }
func (e *InvalidError) Unwrap() error { return e.Err }

// closest returns the candidate nearest to s by edit distance, if close
// enough to be a plausible typo.
func closest(s string, candidates []string) string {
	best, bestD := "", 1<<30
	for _, c := range candidates {
		if d := editDistance(s, c); d < bestD {
			best, bestD = c, d
		}
	}
	if bestD <= 2 || (bestD <= len(s)/3 && bestD <= 4) {
		return best
	}
	return ""
}

func editDistance(a, b string) int {
	prev := make([]int, len(b)+1)
	cur := make([]int, len(b)+1)
	for j := range prev {
		prev[j] = j
	}
	for i := 1; i <= len(a); i++ {
		cur[0] = i
		for j := 1; j <= len(b); j++ {
			cost := 1
			if a[i-1] == b[j-1] {
				cost = 0
			}
			cur[j] = min(prev[j]+1, cur[j-1]+1, prev[j-1]+cost)
		}
		prev, cur = cur, prev
	}
	return prev[len(b)]
}
