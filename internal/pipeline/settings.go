package pipeline

import (
	"encoding/json"
	"sort"

	"github.com/costdrift/costdrift/internal/config"
)

// Reading settings are the keys of a source that shape what reading it
// yields. A file is read again when they change, even if its bytes did not
// (README, Sources); a database source read by watermark is read whole
// again. A source's name and path say which files it reads, not how, and
// are not among them.

// readingValues are the values of every reading key of a source, by the
// key's name in the config file.
func readingValues(src config.Source) map[string]any {
	return map[string]any{
		"columns":             src.Columns,
		"delimiter":           src.Delimiter,
		"date_format":         src.DateFormat,
		"decimal_comma":       src.DecimalComma,
		"thousands_separator": src.ThousandsSeparator,
		"layout":              src.Layout,
		"encoding":            src.Encoding,
		"sheet":               src.Sheet,
		"analysis_type":       src.AnalysisType,
		"query":               src.Query,
		"aggregated":          src.Aggregated,
		"watermark_column":    src.WatermarkColumn,
	}
}

// readingSettings are the reading keys of src that its kind reads, as
// canonical JSON: keys in order, and a key left at its default left out,
// so that a kind that comes to read a new key does not see every file's
// settings change.
func readingSettings(src config.Source) string {
	all := readingValues(src)
	set := map[string]any{}
	for _, k := range sourceKinds[src.Kind].settings {
		switch v := all[k].(type) {
		case string:
			if v != "" {
				set[k] = v
			}
		case bool:
			if v {
				set[k] = v
			}
		case map[string]string:
			if len(v) > 0 {
				set[k] = v
			}
		}
	}
	j, _ := json.Marshal(set) // maps of strings and bools always marshal, in key order
	return string(j)
}

// changedSettings names the keys whose values differ between two readings
// of settings, in order; nil when old is "" (unknown) or they are the same.
func changedSettings(old, now string) []string {
	if old == "" || old == now {
		return nil
	}
	var a, b map[string]json.RawMessage
	if json.Unmarshal([]byte(old), &a) != nil || json.Unmarshal([]byte(now), &b) != nil {
		return []string{"settings"}
	}
	var keys []string
	for k, v := range a {
		if string(b[k]) != string(v) {
			keys = append(keys, k)
		}
	}
	for k := range b {
		if _, ok := a[k]; !ok {
			keys = append(keys, k)
		}
	}
	sort.Strings(keys)
	return keys
}
