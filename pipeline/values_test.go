package pipeline

import "testing"

// Settings arrive typed (defaults, freshly parsed) or after a JSON round
// trip (in a child process); the getters must read both.
func TestValuesGettersReadBothForms(t *testing.T) {
	v := Values{"ints": []int{1, 2}, "floats": []float64{0.5}, "anyints": []any{3.0, 4.0}, "n": 7, "x": 2.5, "strs": []any{"a"}}
	if got := v.Ints("ints"); len(got) != 2 || got[1] != 2 {
		t.Errorf("Ints([]int) = %v", got)
	}
	if got := v.Ints("anyints"); len(got) != 2 || got[0] != 3 {
		t.Errorf("Ints([]any) = %v", got)
	}
	if got := v.Floats("floats"); got[0] != 0.5 {
		t.Errorf("Floats = %v", got)
	}
	if v.Int("n") != 7 || v.Float("x") != 2.5 || v.Strings("strs")[0] != "a" {
		t.Error("scalar or string getters")
	}
}
