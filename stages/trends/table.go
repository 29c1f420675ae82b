package trends

import (
	"encoding/csv"
	"errors"
	"fmt"
	"io"
	"os"
	"strconv"
	"strings"
)

// table is a CSV file read whole, with columns found by name so that a
// column added or moved upstream does not break us.
type table struct {
	path   string
	header []string
	index  map[string]int
	rows   [][]string
}

func readTable(path string) (*table, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, err
	}
	defer f.Close()
	r := csv.NewReader(f)
	r.Comment = '#'
	r.FieldsPerRecord = -1
	header, err := r.Read()
	if err == io.EOF {
		return nil, fmt.Errorf("%s: empty file, expected a header line", path)
	}
	if err != nil {
		return nil, fmt.Errorf("%s: %w", path, err)
	}
	t := &table{path: path, header: header, index: map[string]int{}}
	for i, h := range header {
		h = strings.ToLower(strings.TrimSpace(strings.TrimPrefix(h, "\ufeff")))
		if _, dup := t.index[h]; !dup {
			t.index[h] = i
		}
	}
	for {
		rec, err := r.Read()
		if err == io.EOF {
			break
		}
		if err != nil {
			return nil, fmt.Errorf("%s: %w", path, err)
		}
		t.rows = append(t.rows, rec)
	}
	return t, nil
}

// col returns the index of the first of names present in the header, or -1.
func (t *table) col(names ...string) int {
	for _, n := range names {
		if i, ok := t.index[n]; ok {
			return i
		}
	}
	return -1
}

// mustCol is col that fails with a message naming the file and the columns
// looked for.
func (t *table) mustCol(what string, names ...string) (int, error) {
	if i := t.col(names...); i >= 0 {
		return i, nil
	}
	return -1, fmt.Errorf("%s: no %s column (looked for %s; header is %s)", t.path, what,
		strings.Join(names, ", "), strings.Join(t.header, ","))
}

func cell(rec []string, i int) string {
	if i < 0 || i >= len(rec) {
		return ""
	}
	return strings.TrimSpace(rec[i])
}

// parseNum reads a number; an empty cell, "NA", "NaN" or "null" is missing.
func parseNum(s string) (float64, bool, error) {
	switch strings.ToLower(s) {
	case "", "na", "nan", "null", "none", "-":
		return 0, false, nil
	}
	v, err := strconv.ParseFloat(s, 64)
	if err != nil {
		return 0, false, err
	}
	return v, true, nil
}

// parseBool accepts true/false, yes/no, 1/0 and y/n.
func parseBool(s string) (bool, error) {
	switch strings.ToLower(s) {
	case "true", "yes", "1", "y", "t":
		return true, nil
	case "false", "no", "0", "n", "f", "":
		return false, nil
	}
	return false, fmt.Errorf("%q is not true or false", s)
}

// yearOf decodes the year of a date written in the model calendar, such
// as "1990-02-30T06:00:00" (a valid date in a 360_day calendar) or
// "0001-01-01 00:00". Only the leading signed integer before the first '-'
// is read, so the month and day are never checked against the proleptic
// Gregorian calendar that Go's time package would impose.
func yearOf(s string) (int, error) {
	s = strings.TrimSpace(s)
	if s == "" {
		return 0, errors.New("empty date")
	}
	neg := false
	if s[0] == '-' || s[0] == '+' {
		neg = s[0] == '-'
		s = s[1:]
	}
	end := 0
	for end < len(s) && s[end] >= '0' && s[end] <= '9' {
		end++
	}
	if end == 0 || (end < len(s) && s[end] != '-') {
		return 0, fmt.Errorf("%q is not a date of the form YYYY-MM-DD...", s)
	}
	y, err := strconv.Atoi(s[:end])
	if err != nil {
		return 0, err
	}
	if neg {
		y = -y
	}
	return y, nil
}
