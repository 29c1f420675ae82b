package scheduler

import (
	"fmt"
	"strings"
)

// FieldError is a mistake in a site profile or a job request that a person
// can fix: it names the file and line (when known), the field, the value,
// what is wrong and a hint.
type FieldError struct {
	File  string // profile file, "" for a job request
	Line  int    // 1-based, 0 when unknown
	Field string // dotted path, e.g. "node.accelerators"
	Value string // the offending value as written
	Msg   string
	Hint  string
}

func (e *FieldError) Error() string {
	var b strings.Builder
	if e.File != "" {
		b.WriteString(e.File)
		if e.Line > 0 {
			fmt.Fprintf(&b, ":%d", e.Line)
		}
		b.WriteString(": ")
	} else if e.Line > 0 {
		fmt.Fprintf(&b, "line %d: ", e.Line)
	}
	b.WriteString(e.Field)
	if e.Value != "" {
		fmt.Fprintf(&b, " = %q", e.Value)
	}
	b.WriteString(": ")
	b.WriteString(e.Msg)
	if e.Hint != "" {
		b.WriteString(" (")
		b.WriteString(e.Hint)
		b.WriteString(")")
	}
	return b.String()
}

// EngineError is a scheduler command that failed or answered in a way we
// could not read; it carries the command line and what it printed.
type EngineError struct {
	Engine string
	Op     string // "submit", "states", "cancel"
	Argv   []string
	Output string
	Err    error
}

func (e *EngineError) Error() string {
	out := strings.TrimSpace(e.Output)
	if len(out) > 400 {
		out = out[:400] + "..."
	}
	msg := fmt.Sprintf("%s %s: %s", e.Engine, e.Op, strings.Join(e.Argv, " "))
	if e.Err != nil {
		msg += ": " + e.Err.Error()
	}
	if out != "" {
		msg += ": " + out
	}
	return msg
}

func (e *EngineError) Unwrap() error { return e.Err }
