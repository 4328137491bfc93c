package sqlite

import (
	"context"
	"testing"

	"github.com/costdrift/costdrift/internal/costdrift"
)

// A file loaded before schema 13 comes out of the upgrade with its reading
// settings unknown, not as settings that differ from today's; KeepSettings
// records them once, and never over settings already recorded.
func TestReadingSettingsAfterUpgrade(t *testing.T) {
	ctx := context.Background()
	db, ms := storeBefore(t, 13)
	syncedFile(t, db)
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
