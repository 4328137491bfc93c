package chart

import (
	"bytes"
	"fmt"
	"image/png"
	"math"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"
)

// exampleLease is the invented Quillfeather Frames' equipment lease: 36
// periods at 2,800.00 a month, renewed at 3,300.00 from 2025-07, with one
// period (2024-03) posted twice and flagged as an outlier.
func exampleLease() Timeline {
	var pts []TimePoint
	for i := range 36 {
		period := fmt.Sprintf("%d-%02d", 2023+(i+6)/12, (i+6)%12+1)
		p := TimePoint{Period: period, Cost: 2800, Formula: 2800, Before: period < "2025-07"}
		if !p.Before {
			p.Cost, p.Formula = 3300, 3300
		}
		if period == "2024-03" {
			p.Cost, p.Outlier = 5600, true
		}
		pts = append(pts, p)
	}
	return Timeline{Title: "6110/PAINT Equipment lease: cost per period", YLabel: "cost per period (EUR)", Points: pts,
		Changes: []string{"2025-07"}}
}

func TestTimelineExamples(t *testing.T) {
	tl := exampleLease()
	var svg bytes.Buffer
	if err := tl.WriteSVG(&svg, DefaultWidthPt, DefaultHeightPt); err != nil {
		t.Fatal(err)
	}
	texts, _ := svgTexts(t, svg.Bytes())
	for _, want := range []string{"6110/PAINT Equipment lease: cost per period", "change 2025-07", "before the change",
		"12 periods", "outlier", "formula", "formula before the change", "change of behaviour", "2023-07", "period"} {
		if !slices.Contains(texts, want) {
			t.Errorf("the timeline has no text %q; texts: %q", want, texts)
		}
	}
	// At most eight period labels under 36 periods: every fifth is named.
	labels := 0
	for _, txt := range texts {
		if len(txt) == 7 && txt[4] == '-' && strings.HasPrefix(txt, "20") {
			labels++
		}
	}
	if labels > 8+1 { // +1: the change label's period is a separate text "change …"
		t.Errorf("%d period labels, want at most 8", labels)
	}
	var pngBuf bytes.Buffer
	if err := tl.WritePNG(&pngBuf, DefaultWidthPx, DefaultHeightPx); err != nil {
		t.Fatal(err)
	}
	img, err := png.Decode(&pngBuf)
	if err != nil {
		t.Fatal(err)
	}
	if b := img.Bounds(); b.Dx() != DefaultWidthPx || b.Dy() != DefaultHeightPx {
		t.Errorf("png %d×%d, want %d×%d", b.Dx(), b.Dy(), DefaultWidthPx, DefaultHeightPx)
	}
	if *examplesDir != "" {
		for _, name := range []string{"timeline-lease.png", "timeline-lease.svg"} {
			if err := WriteFile(filepath.Join(*examplesDir, name), tl); err != nil {
				t.Fatal(err)
			}
		}
	}
}

func TestTimelineValidate(t *testing.T) {
	for _, tc := range []struct {
		name string
		edit func(*Timeline)
		want string
	}{
		{"no periods", func(tl *Timeline) { tl.Points = nil }, "no periods"},
		{"cost not finite", func(tl *Timeline) { tl.Points[3].Cost = math.NaN() }, "period 3 (2023-10) cost"},
		{"formula infinite", func(tl *Timeline) { tl.Points[4].Formula = math.Inf(1) }, "period 4 (2023-11) formula"},
		{"change not on the timeline", func(tl *Timeline) { tl.Changes = []string{"2030-01"} }, "change in 2030-01"},
	} {
		tl := exampleLease()
		tc.edit(&tl)
		if err := tl.Validate(); err == nil || !strings.Contains(err.Error(), tc.want) {
			t.Errorf("%s: %v, want an error with %q", tc.name, err, tc.want)
		}
	}
	// A period without a formula value (no driver value then) is allowed.
	tl := exampleLease()
	tl.Points[5].Formula = math.NaN()
	if err := tl.Validate(); err != nil {
		t.Errorf("a period without a formula value: %v", err)
	}
	if runs := tl.formulaRuns(true); len(runs) != 2 {
		t.Errorf("a gap in the formula splits its line: %d runs, want 2", len(runs))
	}
}

// TestScatterDrawsPointsBeforeAChangeApart: periods before a change are
// not what the formula was fitted on; they get their own marker and
// legend entry, and the high-low points keep theirs.
func TestScatterDrawsPointsBeforeAChangeApart(t *testing.T) {
	s := exampleMixed()
	for i := range s.Points[:5] {
		s.Points[i].Before = true
	}
	hi, lo := -1, -1
	for i, p := range s.Points[5:] {
		if hi < 0 || p.Activity > s.Points[hi].Activity {
			hi = i + 5
		}
		if lo < 0 || p.Activity < s.Points[lo].Activity {
			lo = i + 5
		}
	}
	s.HighLow = &[2]int{hi, lo}
	plain := 0
	for _, p := range s.Points {
		if !p.Before && !p.Outlier {
			plain++
		}
	}
	texts, _ := svgTexts(t, renderSVG(t, s))
	for _, want := range []string{"before the change (not fitted)", periodsLabel(plain), "high-low points"} {
		if !slices.Contains(texts, want) {
			t.Errorf("no legend text %q; texts: %q", want, texts)
		}
	}
	kept, before := s.splitBefore()
	if len(before) != 5 || len(kept.Points) != len(s.Points)-5 || kept.HighLow == nil ||
		kept.Points[kept.HighLow[0]] != s.Points[hi] || kept.Points[kept.HighLow[1]] != s.Points[lo] {
		t.Errorf("split: %d before, %d kept, high-low %v", len(before), len(kept.Points), kept.HighLow)
	}
}

func TestWriteTimelineFile(t *testing.T) {
	path := filepath.Join(t.TempDir(), "lease.svg")
	if err := WriteFile(path, exampleLease()); err != nil {
		t.Fatal(err)
	}
	st, err := os.Stat(path)
	if err != nil || st.Mode().Perm() != 0o600 {
		t.Fatalf("timeline file: %v, mode %v", err, st)
	}
}
