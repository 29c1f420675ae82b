package scheduler

import (
	"fmt"
	"reflect"
	"sort"
	"strings"

	"gopkg.in/yaml.v3"
)

// checkKeys walks a decoded YAML document against the yaml tags of the Go
// type it will be decoded into and reports the first unknown key with its
// line and the closest valid key. yaml.v3's KnownFields does the first half
// but names neither the nearest key nor the path, and we want both.
// It also records the line of every key path it sees ("node.cores") so that
// Validate can point at the line of a bad value.
func checkKeys(file string, n *yaml.Node, t reflect.Type, path string, lines map[string]int) error {
	for t.Kind() == reflect.Pointer {
		t = t.Elem()
	}
	if n.Kind == yaml.DocumentNode {
		if len(n.Content) == 0 {
			return nil
		}
		return checkKeys(file, n.Content[0], t, path, lines)
	}
	if n.Kind == yaml.AliasNode {
		return checkKeys(file, n.Alias, t, path, lines)
	}
	switch t.Kind() {
	case reflect.Struct:
		if _, custom := reflect.New(t).Interface().(yaml.Unmarshaler); custom {
			return nil
		}
		if n.Kind != yaml.MappingNode {
			return &FieldError{File: file, Line: n.Line, Field: pathOr(path), Value: n.Value,
				Msg: "must be a mapping of keys", Hint: "valid keys: " + strings.Join(fieldNames(t), ", ")}
		}
		fields := map[string]reflect.Type{}
		for i := 0; i < t.NumField(); i++ {
			f := t.Field(i)
			name := strings.Split(f.Tag.Get("yaml"), ",")[0]
			if name == "" || name == "-" {
				continue
			}
			fields[name] = f.Type
		}
		for i := 0; i+1 < len(n.Content); i += 2 {
			k, v := n.Content[i], n.Content[i+1]
			ft, ok := fields[k.Value]
			key := join(path, k.Value)
			if !ok {
				e := &FieldError{File: file, Line: k.Line, Field: key, Msg: "unknown key"}
				if near := closest(k.Value, fieldNames(t)); near != "" {
					e.Hint = fmt.Sprintf("did you mean %q?", join(path, near))
				} else {
					e.Hint = "valid keys here: " + strings.Join(fieldNames(t), ", ")
				}
				return e
			}
			lines[key] = k.Line
			if err := checkKeys(file, v, ft, key, lines); err != nil {
				return err
			}
		}
	case reflect.Slice:
		if n.Kind == yaml.SequenceNode {
			for i, c := range n.Content {
				key := fmt.Sprintf("%s[%d]", path, i)
				lines[key] = c.Line
				if err := checkKeys(file, c, t.Elem(), key, lines); err != nil {
					return err
				}
			}
		}
	}
	return nil
}

func pathOr(p string) string {
	if p == "" {
		return "(top level)"
	}
	return p
}

func join(path, key string) string {
	if path == "" {
		return key
	}
	return path + "." + key
}

func fieldNames(t reflect.Type) []string {
	var out []string
	for i := 0; i < t.NumField(); i++ {
		name := strings.Split(t.Field(i).Tag.Get("yaml"), ",")[0]
		if name != "" && name != "-" {
			out = append(out, name)
		}
	}
	sort.Strings(out)
	return out
}

// closest returns the candidate within an edit distance of a third of the
// word's length (at least 2), or "" when nothing is that close.
func closest(word string, candidates []string) string {
	best, bestD := "", len(word)/3
	if bestD < 2 {
		bestD = 2
	}
	bestD++
	for _, c := range candidates {
		if d := editDistance(strings.ToLower(word), c); d < bestD {
			best, bestD = c, d
		}
	}
	return best
}

// editDistance is the Levenshtein distance (insert, delete, substitute).
func editDistance(a, b string) int {
	ra, rb := []rune(a), []rune(b)
	prev := make([]int, len(rb)+1)
	cur := make([]int, len(rb)+1)
	for j := range prev {
		prev[j] = j
	}
	for i := 1; i <= len(ra); i++ {
		cur[0] = i
		for j := 1; j <= len(rb); j++ {
			cost := 1
			if ra[i-1] == rb[j-1] {
				cost = 0
			}
			cur[j] = min(prev[j]+1, cur[j-1]+1, prev[j-1]+cost)
		}
		prev, cur = cur, prev
	}
	return prev[len(rb)]
}
