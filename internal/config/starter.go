package config

import (
	"fmt"
	"reflect"
	"slices"
	"strings"
	"unicode/utf8"
)

// Starter is the commented configuration that `costdrift init` writes and
// that config/costdrift.example.yaml holds: every declared key with its
// default (or its example) and its doc, and an example of each list of
// records. Paths are relative to this file.
var Starter = starter()

const starterHeader = `# costdrift configuration.
# Every key below shows its default. Environment variables override keys:
# COSTDRIFT_STORE=/var/lib/costdrift/costdrift.db, COSTDRIFT_ANALYSIS_WINDOW=24.
# Relative paths are relative to the folder of this file.
`

// recordExamples are the starter's lists of records, by top-level key,
// with comments on what each record holds.
var recordExamples = map[string]string{
	"sources": `sources:
  # General-ledger lines. Canonical CSV header:
  #   entry_id, line, date, account, cost_center, amount, description
  # (amount signed, debit positive; or debit and credit columns instead).
  # Per source: columns (canonical name -> your header), delimiter (detected
  # when empty), date_format (e.g. DD.MM.YYYY), decimal_comma,
  # thousands_separator.
  ledger:
    - name: gl
      kind: csv
      path: data/gl/*.csv
  # Activity per period, long form (period, driver, value, cost_center, unit)
  # or wide form (period, then one column per driver).
  activity:
    - name: ops
      kind: csv
      path: data/activity.csv
  # Optional chart of accounts: account, name, type, group.
  accounts:
    - name: coa
      kind: csv
      path: data/accounts.csv
`,
	"alerts": `alerts:
  recipients:
    - email: costs@example.test
      cost_centers: ["*"]
      accounts: ["*"]
      min_severity: warning    # info | warning | critical
`,
}

const (
	// commentColumn is where a nested key's comment starts: past the
	// longest key and value of the analysis section.
	commentColumn = 31
	// paragraphWidth bounds the comment lines above a top-level key.
	paragraphWidth = 80
)

func starter() string {
	s, _ := StarterWith(nil)
	return s
}

// StarterWith is the starter with the given declared keys (by dotted
// name) showing the values given, of their Go types, instead of their
// defaults: a config such as the demo's that differs from the starter in a
// few keys. An undeclared key, or a value of another type, is an error.
func StarterWith(values map[string]any) (string, error) {
	for name, v := range values {
		i := slices.IndexFunc(keys, func(k key) bool { return k.name == name })
		if i < 0 {
			return "", fmt.Errorf("config: starter: no key %s", name)
		}
		if reflect.TypeOf(v) != reflect.TypeOf(keys[i].def) {
			return "", fmt.Errorf("config: starter: %s takes a %T, not a %T", name, keys[i].def, v)
		}
	}
	var b strings.Builder
	b.WriteString(starterHeader)
	for _, section := range sections {
		b.WriteString("\n")
		if example, ok := recordExamples[section]; ok {
			b.WriteString(example)
			continue
		}
		declared := keysIn(section)
		for i := range declared {
			if v, ok := values[declared[i].name]; ok {
				declared[i].example = v
			}
		}
		writeKeys(&b, declared)
	}
	return b.String(), nil
}

// writeKeys writes the declared keys of one top-level key as YAML, opening
// a nested mapping where a key's parents change. A top-level key has its
// doc above it as a paragraph; a nested one has it beside, aligned.
func writeKeys(b *strings.Builder, declared []key) {
	var open []string // the mappings the previous key was nested in
	for _, k := range declared {
		path := strings.Split(k.name, ".")
		parents, leaf := path[:len(path)-1], path[len(path)-1]
		same := 0
		for same < len(open) && same < len(parents) && open[same] == parents[same] {
			same++
		}
		for depth := same; depth < len(parents); depth++ {
			fmt.Fprintf(b, "%s%s:\n", indent(depth), parents[depth])
		}
		open = parents

		line := indent(len(parents)) + leaf + ": " + yamlValue(k.shown())
		switch {
		case len(parents) == 0:
			writeParagraph(b, k.doc)
		case k.doc != "":
			pad := max(commentColumn-utf8.RuneCountInString(line), 3)
			line += strings.Repeat(" ", pad) + "# " + k.doc
		}
		b.WriteString(line + "\n")
	}
}

// writeParagraph writes doc as comment lines of at most paragraphWidth
// characters (a longer word gets a line of its own).
func writeParagraph(b *strings.Builder, doc string) {
	line := "#"
	for _, word := range strings.Fields(doc) {
		if line != "#" && utf8.RuneCountInString(line)+1+utf8.RuneCountInString(word) > paragraphWidth {
			b.WriteString(line + "\n")
			line = "#"
		}
		line += " " + word
	}
	if line != "#" {
		b.WriteString(line + "\n")
	}
}

func indent(depth int) string { return strings.Repeat("  ", depth) }

// shown is the value the starter gives the key.
func (k key) shown() any {
	if k.example != nil {
		return k.example
	}
	return k.def
}
