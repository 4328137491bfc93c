package costdrift

import (
	"fmt"
	"go/parser"
	"go/token"
	"io/fs"
	"path/filepath"
	"slices"
	"strconv"
	"strings"
	"testing"
)

// The import rule of the packages under internal/ (DEVELOPERS.md, "The
// data flow"). Paths are relative to internal/. cmd/ is outside it: it
// wires everything together.
var (
	// domain is the package of the types every stage shares; it imports
	// only domainImports.
	domain        = "costdrift"
	domainImports = []string{"money"}

	// leaves are libraries that know nothing of the product's stages and
	// import only one another. Each maps to the packages that may import
	// it besides the application layer, nil for any stage: the numeric
	// libraries fit and drift are for the analysis and the budget alone.
	leaves = map[string][]string{
		"money":      nil,
		"calendar":   nil,
		"atomicfile": nil,
		"present":    nil,
		"fit":        {"analyze", "budget", "drift"},
		"drift":      {"analyze", "budget", "fit"},
	}

	// sharedRules hold rules over domain types that several stages of one
	// kind apply alike (canon: the rules of a ledger, activity or account
	// row, for every source kind). They import the domain and the leaves;
	// each maps to the stages that may import it.
	sharedRules = map[string][]string{
		"canon": {"csvsource", "xlsxsource", "sqlsource", "saftsource"},
	}

	// applicationLayer holds the use cases the commands call; like cmd/,
	// it may import every package, and only cmd/ may import it.
	applicationLayer = []string{"pipeline"}

	// interfaces put the application layer before people, as the commands
	// do (the web view); like cmd/, they may import every package, and only
	// cmd/ may import them.
	interfaces = []string{"web"}

	// testHelpers are imported by _test.go files only; they may import the
	// domain and the leaves.
	testHelpers = []string{"costdrift/costdrifttest"}
)

// Every other package under internal/ is a stage (a source, the store, the
// series, the analysis, alerts, budget, report, mail, chart, the demo, the
// config): it may import the domain and the leaves, never another stage.

const internalPrefix = "github.com/costdrift/costdrift/internal/"

// importAllowed says whether package from (under internal/) may import
// package to (under internal/), and if not, why.
func importAllowed(from, to string) error {
	switch {
	case from == to:
		return nil
	case slices.Contains(testHelpers, to):
		return fmt.Errorf("%s is for _test.go files only", to)
	case slices.Contains(applicationLayer, from), slices.Contains(interfaces, from):
		return nil
	case slices.Contains(interfaces, to):
		return fmt.Errorf("only cmd/ imports an interface (%s)", to)
	case slices.Contains(applicationLayer, to):
		return fmt.Errorf("only cmd/ imports the application layer (%s)", to)
	case from == domain:
		if slices.Contains(domainImports, to) {
			return nil
		}
		return fmt.Errorf("the domain package imports only %s", strings.Join(domainImports, ", "))
	}
	_, fromLeaf := leaves[from]
	importers, toLeaf := leaves[to]
	_, fromRules := sharedRules[from]
	users, toRules := sharedRules[to]
	switch {
	case fromRules && (to == domain || toLeaf):
		return nil
	case fromRules:
		return fmt.Errorf("%s holds shared rules: it imports the domain and the leaves only, not %s", from, to)
	case toRules && !slices.Contains(users, from):
		return fmt.Errorf("%s is imported only by %s", to, strings.Join(users, ", "))
	case toRules:
		return nil
	case fromLeaf && !toLeaf:
		return fmt.Errorf("%s is a leaf library: it imports other leaves only, not %s", from, to)
	case toLeaf && importers != nil && !slices.Contains(importers, from):
		return fmt.Errorf("%s is imported only by %s", to, strings.Join(importers, ", "))
	case toLeaf:
		return nil
	case to == domain:
		return nil // from is a stage or a test helper
	case slices.Contains(testHelpers, from):
		return fmt.Errorf("a test helper imports the domain and the leaves only, not the stage %s", to)
	}
	return fmt.Errorf("a stage (%s) must not import another stage (%s): share the type through internal/%s", from, to, domain)
}

func TestImportRule(t *testing.T) {
	for _, tc := range []struct {
		from, to string
		ok       bool
	}{
		{"costdrift", "money", true},
		{"costdrift", "fit", false},
		{"costdrift", "sqlite", false},
		{"sqlite", "costdrift", true},
		{"sqlite", "money", true},
		{"sqlite", "budget", false},
		{"sqlite", "fit", false},
		{"report", "budget", false},
		{"series", "calendar", true},
		{"mail", "atomicfile", true},
		{"analyze", "fit", true},
		{"analyze", "drift", true},
		{"budget", "fit", true},
		{"drift", "fit", true},
		{"report", "fit", false},
		{"fit", "costdrift", false},
		{"calendar", "series", false},
		{"csvsource", "xlsxsource", false},
		{"csvsource", "unlisted", false}, // a new package is a stage until listed otherwise
		{"pipeline", "sqlite", true},
		{"pipeline", "fit", true},
		{"sqlite", "pipeline", false},
		{"costdrift", "pipeline", false},
		{"costdrift/costdrifttest", "costdrift", true},
		{"costdrift/costdrifttest", "sqlite", false},
		{"csvsource", "costdrift/costdrifttest", false},
		{"csvsource", "canon", true},
		{"saftsource", "canon", true},
		{"sqlite", "canon", false},
		{"canon", "costdrift", true},
		{"canon", "money", true},
		{"canon", "csvsource", false},
	} {
		if err := importAllowed(tc.from, tc.to); (err == nil) != tc.ok {
			t.Errorf("%s imports %s: allowed %v (%v), want %v", tc.from, tc.to, err == nil, err, tc.ok)
		}
	}
}

// TestImports applies the rule to every non-test Go file under internal/.
func TestImports(t *testing.T) {
	root := filepath.Join("..")
	fset := token.NewFileSet()
	packages := map[string]bool{}
	edges := 0
	err := filepath.WalkDir(root, func(path string, d fs.DirEntry, err error) error {
		if err != nil {
			return err
		}
		if d.IsDir() {
			if name := d.Name(); path != root && (name == "testdata" || strings.HasPrefix(name, ".") || strings.HasPrefix(name, "_")) {
				return filepath.SkipDir
			}
			return nil
		}
		if !strings.HasSuffix(path, ".go") || strings.HasSuffix(path, "_test.go") {
			return nil
		}
		rel, err := filepath.Rel(root, filepath.Dir(path))
		if err != nil {
			return err
		}
		from := filepath.ToSlash(rel)
		packages[from] = true
		f, err := parser.ParseFile(fset, path, nil, parser.ImportsOnly)
		if err != nil {
			return err
		}
		for _, spec := range f.Imports {
			imported, err := strconv.Unquote(spec.Path.Value)
			if err != nil {
				return err
			}
			to, ok := strings.CutPrefix(imported, internalPrefix)
			if !ok {
				continue
			}
			edges++
			if err := importAllowed(from, to); err != nil {
				t.Errorf("internal/%s imports internal/%s: %v", filepath.ToSlash(path[len(root)+1:]), to, err)
			}
		}
		return nil
	})
	if err != nil {
		t.Fatal(err)
	}
	// The walk must have seen the tree, or the rule checked nothing.
	for _, p := range []string{domain, "sqlite", "analyze", "fit", "costdrift/costdrifttest"} {
		if !packages[p] {
			t.Errorf("no Go file found in internal/%s", p)
		}
	}
	if edges < 20 {
		t.Errorf("only %d imports between internal packages found", edges)
	}
}
