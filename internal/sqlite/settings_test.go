package sqlite

import (
	"context"
	"testing"

	"github.com/costdrift/costdrift/internal/costdrift"
	"github.com/costdrift/costdrift/migrations"
)

// A file loaded before schema 13 comes out of the upgrade with its reading
// settings unknown, not as settings that differ from today's; KeepSettings
// records them once, and never over settings already recorded.
func TestReadingSettingsAfterUpgrade(t *testing.T) {
	ctx := context.Background()
	ms, err := loadMigrations(migrations.FS)
	if err != nil {
		t.Fatal(err)
	}
	var before []migration
	for _, m := range ms {
		if m.version < 13 {
			before = append(before, m)
		}
	}
	db := bareDB(t)
	if err := db.applyMigrations(ctx, before); err != nil {
		t.Fatal(err)
	}
	mustExec(t, db, `INSERT INTO sync_runs (id, source, role, kind, started_at, status) VALUES (1, 'gl', 'ledger', 'csv', '2025-06-01T06:00:00Z', 'ok')`)
	mustExec(t, db, `INSERT INTO source_files (id, source, path, size, sha256, rows, loaded_at, sync_run_id)
		VALUES (7, 'gl', '/books/gl.csv', 10, 'abc', 2, '2025-06-01T06:00:00Z', 1)`)
	if err := db.applyMigrations(ctx, ms); err != nil {
		t.Fatal(err)
	}
	files, err := db.SourceFiles(ctx, "gl")
	if err != nil {
		t.Fatal(err)
	}
	if len(files) != 1 || files[0].ID != 7 || files[0].Settings != "" {
		t.Fatalf("after the upgrade: %+v, want file 7 with unknown settings", files)
	}

	for _, s := range []string{`{"date_format":"DD/MM/YYYY"}`, `{}`} {
		if err := db.KeepSettings(ctx, costdrift.SourceFile{ID: 7, Settings: s}); err != nil {
			t.Fatal(err)
		}
	}
	if got := dump(t, db, `SELECT reading_settings FROM source_files WHERE id = 7`); got != "\"{\\\"date_format\\\":\\\"DD/MM/YYYY\\\"}\"\n" {
		t.Errorf("reading_settings = %s, want the first settings kept", got)
	}
}
