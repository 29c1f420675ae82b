package pipeline

import (
	"encoding/json"
	"fmt"
	"math"
)

// Values holds the resolved settings of one stage instance: every declared
// setting is present (defaults filled in), typed as the Setting says. After
// a JSON round trip numbers arrive as float64 and lists as []any, so the
// getters accept both forms.
type Values map[string]any

func (v Values) get(name string) any {
	x, ok := v[name]
	if !ok {
		panic(fmt.Sprintf("pipeline: setting %q was not declared by the stage kind", name))
	}
	return x
}

// Float returns a float setting.
func (v Values) Float(name string) float64 {
	f, ok := toFloat(v.get(name))
	if !ok {
		panic(fmt.Sprintf("pipeline: setting %q is %T, not a number", name, v[name]))
	}
	return f
}

// Int returns an int setting.
func (v Values) Int(name string) int {
	f, ok := toFloat(v.get(name))
	if !ok || f != math.Trunc(f) {
		panic(fmt.Sprintf("pipeline: setting %q is %v, not an integer", name, v[name]))
	}
	return int(f)
}

// String returns a string setting.
func (v Values) String(name string) string {
	s, ok := v.get(name).(string)
	if !ok {
		panic(fmt.Sprintf("pipeline: setting %q is %T, not a string", name, v[name]))
	}
	return s
}

// Bool returns a bool setting.
func (v Values) Bool(name string) bool {
	b, ok := v.get(name).(bool)
	if !ok {
		panic(fmt.Sprintf("pipeline: setting %q is %T, not a bool", name, v[name]))
	}
	return b
}

// Floats returns a list-of-float setting.
func (v Values) Floats(name string) []float64 {
	switch x := v.get(name).(type) {
	case []float64:
		return append([]float64(nil), x...)
	case []int:
		out := make([]float64, len(x))
		for i, e := range x {
			out[i] = float64(e)
		}
		return out
	case []any:
		out := make([]float64, len(x))
		for i, e := range x {
			f, ok := toFloat(e)
			if !ok {
				panic(fmt.Sprintf("pipeline: setting %q element %d is %T", name, i, e))
			}
			out[i] = f
		}
		return out
	case nil:
		return nil
	}
	panic(fmt.Sprintf("pipeline: setting %q is %T, not a list of numbers", name, v[name]))
}

// Ints returns a list-of-int setting.
func (v Values) Ints(name string) []int {
	fs := v.Floats(name)
	out := make([]int, len(fs))
	for i, f := range fs {
		out[i] = int(f)
	}
	return out
}

// Strings returns a list-of-string setting.
func (v Values) Strings(name string) []string {
	switch x := v.get(name).(type) {
	case []string:
		return append([]string(nil), x...)
	case []any:
		out := make([]string, len(x))
		for i, e := range x {
			s, ok := e.(string)
			if !ok {
				panic(fmt.Sprintf("pipeline: setting %q element %d is %T", name, i, e))
			}
			out[i] = s
		}
		return out
	case nil:
		return nil
	}
	panic(fmt.Sprintf("pipeline: setting %q is %T, not a list of strings", name, v[name]))
}

// Has reports whether a setting is present.
func (v Values) Has(name string) bool { _, ok := v[name]; return ok }

func toFloat(x any) (float64, bool) {
	switch n := x.(type) {
	case float64:
		return n, true
	case float32:
		return float64(n), true
	case int:
		return float64(n), true
	case int64:
		return float64(n), true
	case json.Number:
		f, err := n.Float64()
		return f, err == nil
	}
	return 0, false
}
