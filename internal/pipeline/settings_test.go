package pipeline

import (
	"reflect"
	"testing"

	"github.com/costdrift/costdrift/internal/config"
)

// The settings a file is read with are the keys its kind reads, left out
// at their defaults; name and path are not among them.
func TestReadingSettings(t *testing.T) {
	csv := config.Source{Name: "gl", Kind: "csv", Path: "data/gl/*.csv", Columns: map[string]string{"amount": "Betrag", "date": "Datum"},
		DateFormat: "DD.MM.YYYY", DecimalComma: true, ThousandsSeparator: ".", Sheet: "Journal", AnalysisType: "DEPT"}
	tests := []struct {
		name string
		src  config.Source
		want string
	}{
		{"csv", csv, `{"columns":{"amount":"Betrag","date":"Datum"},"date_format":"DD.MM.YYYY","decimal_comma":true,"thousands_separator":"."}`},
		{"csv, other name and path", func() config.Source { s := csv; s.Name, s.Path = "ledger", "books/*.csv"; return s }(),
			`{"columns":{"amount":"Betrag","date":"Datum"},"date_format":"DD.MM.YYYY","decimal_comma":true,"thousands_separator":"."}`},
		{"xlsx reads a sheet", func() config.Source { s := csv; s.Kind = "xlsx"; return s }(),
			`{"columns":{"amount":"Betrag","date":"Datum"},"date_format":"DD.MM.YYYY","decimal_comma":true,"sheet":"Journal","thousands_separator":"."}`},
		{"saft reads an analysis type", func() config.Source { s := csv; s.Kind = "saft"; return s }(), `{"analysis_type":"DEPT"}`},
		{"defaults", config.Source{Name: "gl", Kind: "csv", Path: "gl.csv"}, `{}`},
		{"sql", config.Source{Kind: "sql", Query: "SELECT * FROM gl", Refresh: "watermark", WatermarkColumn: "id", Timeout: "5m"},
			`{"query":"SELECT * FROM gl","watermark_column":"id"}`},
	}
	for _, tc := range tests {
		if got := readingSettings(tc.src); got != tc.want {
			t.Errorf("%s: readingSettings = %s, want %s", tc.name, got, tc.want)
		}
	}

	for name, k := range sourceKinds {
		for _, key := range k.settings {
			if _, ok := readingValues(config.Source{})[key]; !ok {
				t.Errorf("kind %s reads setting %q, which readingValues does not know", name, key)
			}
		}
	}

	before := readingSettings(config.Source{Kind: "csv", DateFormat: "DD/MM/YYYY", Delimiter: ";"})
	after := readingSettings(config.Source{Kind: "csv", DateFormat: "MM/DD/YYYY", DecimalComma: true, Delimiter: ";"})
	if got, want := changedSettings(before, after), []string{"date_format", "decimal_comma"}; !reflect.DeepEqual(got, want) {
		t.Errorf("changedSettings = %v, want %v", got, want)
	}
	if got := changedSettings(after, readingSettings(config.Source{Kind: "csv", DateFormat: "MM/DD/YYYY", Delimiter: ";"})); !reflect.DeepEqual(got, []string{"decimal_comma"}) {
		t.Errorf("a key set back to its default: changedSettings = %v, want [decimal_comma]", got)
	}
	if got := changedSettings("", after); got != nil {
		t.Errorf("settings unknown: changedSettings = %v, want none", got)
	}
	if got := changedSettings(after, after); got != nil {
		t.Errorf("same settings: changedSettings = %v, want none", got)
	}
}
