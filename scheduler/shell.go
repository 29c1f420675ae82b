package scheduler

import (
	"fmt"
	"regexp"
	"strings"
)

// plainRE are words that mean the same to bash quoted or not.
var plainRE = regexp.MustCompile(`^[A-Za-z0-9_./:=@%+,-]+$`)

// Quote returns s as one bash word that expands to exactly s: bare when
// it holds only characters without meaning to the shell, otherwise in
// single quotes (inside which bash interprets nothing), each ' written as
// '\”. Newlines survive as themselves.
func Quote(s string) string {
	if s != "" && plainRE.MatchString(s) {
		return s
	}
	return "'" + strings.ReplaceAll(s, "'", `'\''`) + "'"
}

// QuoteAll quotes each word and joins them with spaces.
func QuoteAll(words []string) string {
	q := make([]string, len(words))
	for i, w := range words {
		q[i] = Quote(w)
	}
	return strings.Join(q, " ")
}

// Template renders one word that mixes literal text with placeholders
// {name}: literal parts are quoted, and each placeholder becomes the shell
// text vars[name] gives (written by us, e.g. `"${SQUALL_SHARDS}"` or a
// validated number). An unknown placeholder is an error.
func Template(word string, vars map[string]string) (string, error) {
	var b strings.Builder
	last := 0
	for _, m := range placeholderRE.FindAllStringSubmatchIndex(word, -1) {
		name := word[m[2]:m[3]]
		v, ok := vars[name]
		if !ok {
			return "", fmt.Errorf("unknown placeholder {%s} in %q (known: %s)", name, word, strings.Join(sortedKeys(vars), ", "))
		}
		if m[0] > last {
			b.WriteString(Quote(word[last:m[0]]))
		}
		b.WriteString(v)
		last = m[1]
	}
	if last < len(word) || last == 0 {
		b.WriteString(Quote(word[last:]))
	}
	return b.String(), nil
}

// Templates renders a list of words with Template and joins them.
func Templates(words []string, vars map[string]string) (string, error) {
	out := make([]string, len(words))
	for i, w := range words {
		s, err := Template(w, vars)
		if err != nil {
			return "", err
		}
		out[i] = s
	}
	return strings.Join(out, " "), nil
}

// PathWord renders a profile path that may begin with $NAME or ${NAME}:
// the variable is expanded (double-quoted), the rest is quoted literally.
func PathWord(p string) string {
	m := leadingVarRE.FindStringSubmatch(p)
	if m == nil {
		return Quote(p)
	}
	name := strings.Trim(m[1], "{}")
	rest := p[len(m[0]):]
	if rest == "" {
		return `"${` + name + `}"`
	}
	return `"${` + name + `}"` + Quote(rest)
}

var jobNameRE = regexp.MustCompile(`^[A-Za-z0-9_][A-Za-z0-9_.-]{0,63}$`)

// CheckName validates a job name: it reaches directives unquoted.
func CheckName(name string) error {
	if !jobNameRE.MatchString(name) {
		return &FieldError{Field: "job name", Value: name, Msg: "not a valid job name",
			Hint: "1-64 letters, digits, _ . -, not starting with . or -"}
	}
	return nil
}

// plainPathRE are paths we are willing to write into a directive line,
// whose quoting rules differ by engine: no spaces, quotes or %.
var plainPathRE = regexp.MustCompile(`^[A-Za-z0-9_./+@:,=-]+$`)

// PlainPath reports whether p may appear unquoted in a directive.
// The {job} and {index} placeholders are allowed: engines replace them
// with their own patterns.
func PlainPath(p string) bool {
	p = strings.NewReplacer("{job}", "j", "{index}", "i").Replace(p)
	return plainPathRE.MatchString(p) && !strings.HasPrefix(p, "-")
}

// CheckEnvName validates an exported variable name.
func CheckEnvName(n string) error {
	if !envNameRE.MatchString(n) {
		return &FieldError{Field: "environment variable", Value: n, Msg: "not a variable name", Hint: "letters, digits and _, not starting with a digit"}
	}
	return nil
}
