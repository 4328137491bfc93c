package pipeline

import (
	"context"
	"errors"
	"fmt"
	"os"
	"path/filepath"

	"github.com/costdrift/costdrift/internal/sqlite"
)

// Forgotten is one file Forget dropped: the rows it held that were
// removed, and the rows it had restated that went back to the files still
// holding them.
type Forgotten struct {
	Path, Source       string
	Removed, GivenBack int
}

// Forget drops what vanished files loaded, from whichever source loaded
// them, each file in one transaction. A file may be named as given, or
// relative to the config's folder.
func Forget(ctx context.Context, e *Env, db *sqlite.DB, files []string) ([]Forgotten, error) {
	var sources []string
	for _, s := range e.sources() {
		sources = append(sources, s.src.Name)
	}
	var out []Forgotten
	for _, f := range files {
		candidates := []string{f}
		if abs, err := filepath.Abs(f); err == nil {
			candidates = append(candidates, abs)
		}
		if !filepath.IsAbs(f) {
			candidates = append(candidates, filepath.Join(filepath.Dir(mustAbs(e.Config.File)), f))
		}
		done, err := forgetOne(ctx, db, sources, candidates)
		if err != nil {
			return out, err
		}
		if done == nil {
			return out, fmt.Errorf("no source has loaded %s; `sqlite3 %s \"SELECT source, path FROM source_files\"` lists the files it knows", f, db.Path())
		}
		out = append(out, *done)
	}
	return out, nil
}

// forgetOne forgets the first of the candidate paths that a source loaded;
// nil when none did.
func forgetOne(ctx context.Context, db *sqlite.DB, sources, candidates []string) (*Forgotten, error) {
	for _, s := range sources {
		for _, c := range candidates {
			removed, givenBack, err := db.ForgetFile(ctx, s, c)
			if errors.Is(err, sqlite.ErrUnknownFile) {
				continue
			}
			if err != nil {
				return nil, fmt.Errorf("forget %s: %w", c, err)
			}
			return &Forgotten{Path: c, Source: s, Removed: removed, GivenBack: givenBack}, nil
		}
	}
	return nil, nil
}

func mustAbs(p string) string {
	abs, err := filepath.Abs(p)
	if err != nil {
		return p
	}
	return abs
}

// DryRun runs a whole sync inside one transaction that is rolled back, and
// returns what it would have done. Without a store yet, it works on a
// throwaway one, so nothing is created.
func DryRun(ctx context.Context, e *Env, done func(SourceResult)) ([]SourceResult, error) {
	path := e.Config.StorePath()
	if !sqlite.Exists(path) {
		tmp, err := os.MkdirTemp("", "costdrift-dry-run-")
		if err != nil {
			return nil, err
		}
		defer os.RemoveAll(tmp)
		path = filepath.Join(tmp, "costdrift.db")
	}
	db, err := sqlite.Open(ctx, path, e.Currency)
	if err != nil {
		return nil, err
	}
	defer db.Close()
	db.Now = e.Now
	dry, rollback, err := db.DryRun(ctx)
	if err != nil {
		return nil, err
	}
	defer rollback()
	if err := dry.CheckCalendar(ctx, e.Calendar.Kind()); err != nil {
		return nil, err
	}
	return Sync(ctx, e, dry, done)
}
