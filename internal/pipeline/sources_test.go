package pipeline

import (
	"os"
	"path/filepath"
	"reflect"
	"strings"
	"testing"

	"github.com/costdrift/costdrift/internal/config"
)

// Every registered kind reads in one way, file or query, and the config
// checks sources against the registry: a kind it lacks is refused, naming
// the kinds there are, and a role a kind cannot fill is refused too.
func TestSourceKindsRegistry(t *testing.T) {
	for name, k := range sourceKinds {
		if (k.file == nil) == (k.query == nil) || len(k.roles) == 0 {
			t.Errorf("kind %s: a file reader %v, a query reader %v, roles %v; want exactly one reader and a role", name, k.file != nil, k.query != nil, k.roles)
		}
	}
	want := config.Kinds{"csv": {"ledger", "activity", "accounts"}, "xlsx": {"ledger", "activity", "accounts"},
		"sql": {"ledger", "activity", "accounts"}, "saft": {"ledger", "accounts"}}
	if got := Kinds(); !reflect.DeepEqual(got, want) {
		t.Errorf("Kinds() = %v, want %v", got, want)
	}
	dir := t.TempDir()
	for _, tc := range []struct{ yaml, want string }{
		{"sources:\n  ledger:\n    - {name: gl, kind: parquet, path: a.pq}\n", `sources.ledger[0].kind: must be one of csv, saft, sql, xlsx, not "parquet"`},
		{"sources:\n  activity:\n    - {name: ops, kind: saft, path: a.xml}\n", "sources.activity[0].kind: a saft source cannot deliver activity"},
	} {
		path := filepath.Join(dir, "costdrift.yaml")
		if err := os.WriteFile(path, []byte(tc.yaml), 0o600); err != nil {
			t.Fatal(err)
		}
		if _, err := Load(path, today); err == nil || !strings.Contains(err.Error(), tc.want) {
			t.Errorf("Load: %v, want %q", err, tc.want)
		}
	}
}
