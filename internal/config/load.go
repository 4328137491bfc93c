package config

import (
	"errors"
	"fmt"
	"io/fs"
	"os"
	"reflect"
	"sort"
	"strings"

	"github.com/spf13/viper"
)

// EnvPrefix prefixes the environment variables that override keys:
// COSTDRIFT_STORE overrides store, COSTDRIFT_ANALYSIS_WINDOW analysis.window
// (env.go).
const EnvPrefix = "COSTDRIFT"

// Default returns the configuration with every default applied and no sources.
func Default() *Config {
	v := newViper()
	var c Config
	if err := v.Unmarshal(&c); err != nil {
		panic("config: defaults do not decode: " + err.Error())
	}
	return &c
}

func newViper() *viper.Viper {
	v := viper.New()
	v.SetConfigType("yaml")
	for _, k := range keys {
		v.SetDefault(k.name, k.def)
	}
	return v
}

// Load reads the YAML file at path, applies defaults and COSTDRIFT_*
// environment overrides, rejects unknown keys, and validates the result;
// kinds are the kinds of source the build reads. A problem with a value
// from the environment names the variable; COSTDRIFT_* variables that
// nothing reads come back in the Config's Warnings.
func Load(path string, kinds Kinds) (*Config, error) {
	f, err := os.Open(path)
	if err != nil {
		if errors.Is(err, fs.ErrNotExist) {
			return nil, fmt.Errorf("config file %s not found: run `costdrift init` to write a starter one, or pass --config FILE", path)
		}
		return nil, fmt.Errorf("config file %s: %w", path, err)
	}
	defer f.Close()

	v := newViper()
	if err := v.ReadConfig(f); err != nil {
		return nil, fmt.Errorf("config file %s is not valid YAML: %w", path, err)
	}
	// Unknown keys are checked on the file alone: a typo there would
	// otherwise silently fall back to a default.
	raw := viper.New()
	raw.SetConfigType("yaml")
	if _, err := f.Seek(0, 0); err != nil {
		return nil, fmt.Errorf("config file %s: %w", path, err)
	}
	if err := raw.ReadConfig(f); err != nil {
		return nil, fmt.Errorf("config file %s is not valid YAML: %w", path, err)
	}
	if err := checkKeys(raw.AllSettings(), reflect.TypeOf(Config{}), ""); err != nil {
		err.File = path
		return nil, err
	}
	fromEnv, err := applyEnvironment(v.Set, os.LookupEnv)
	if err != nil {
		return nil, err
	}

	var c Config
	if err := v.Unmarshal(&c); err != nil {
		return nil, fmt.Errorf("config file %s: %w", path, err)
	}
	c.File = path
	if err := c.Validate(kinds); err != nil {
		return nil, blameEnvironment(err, fromEnv)
	}
	c.Warnings = envWarnings(os.Environ(), &c)
	return &c, nil
}

// checkKeys walks the settings read from the file against the struct type
// and reports the first unknown key with the nearest known one.
func checkKeys(settings any, t reflect.Type, prefix string) *Error {
	for t.Kind() == reflect.Pointer {
		t = t.Elem()
	}
	switch t.Kind() {
	case reflect.Struct:
		m, ok := settings.(map[string]any)
		if !ok {
			if settings == nil {
				return nil
			}
			return &Error{Key: strings.TrimSuffix(prefix, "."), Msg: "must be a mapping of keys"}
		}
		known := map[string]reflect.StructField{}
		for i := 0; i < t.NumField(); i++ {
			tag := t.Field(i).Tag.Get("mapstructure")
			if tag != "" && tag != "-" {
				known[tag] = t.Field(i)
			}
		}
		keys := make([]string, 0, len(m))
		for k := range m {
			keys = append(keys, k)
		}
		sort.Strings(keys)
		for _, k := range keys {
			field, ok := known[strings.ToLower(k)]
			if !ok {
				names := make([]string, 0, len(known))
				for n := range known {
					names = append(names, n)
				}
				msg := "unknown key"
				if s := nearest(strings.ToLower(k), names); s != "" {
					msg += fmt.Sprintf("; did you mean %s%s?", prefix, s)
				}
				return &Error{Key: prefix + k, Msg: msg}
			}
			if err := checkKeys(m[k], field.Type, prefix+k+"."); err != nil {
				return err
			}
		}
	case reflect.Slice:
		list, ok := settings.([]any)
		if !ok {
			return nil // a scalar where a list belongs is the decoder's to report
		}
		elem := t.Elem()
		if elem.Kind() != reflect.Struct {
			return nil
		}
		base := strings.TrimSuffix(prefix, ".")
		for i, item := range list {
			if err := checkKeys(item, elem, fmt.Sprintf("%s[%d].", base, i)); err != nil {
				return err
			}
		}
	}
	return nil
}

// nearest returns the known name closest to key by edit distance, or "" when
// none is close enough to be a plausible typo.
func nearest(key string, names []string) string {
	sort.Strings(names)
	best, bestDist := "", 3 // more than two edits away is not a typo
	for _, n := range names {
		d := editDistance(key, n)
		if d >= bestDist && len(key) >= 3 && (strings.HasPrefix(n, key) || strings.HasPrefix(key, n)) {
			d = bestDist - 1 // a cut-short or run-on name is as good as a typo
		}
		if d < bestDist {
			best, bestDist = n, d
		}
	}
	return best
}

// editDistance is the Levenshtein distance between a and b.
func editDistance(a, b string) int {
	prev := make([]int, len(b)+1)
	cur := make([]int, len(b)+1)
	for j := range prev {
		prev[j] = j
	}
	for i := 1; i <= len(a); i++ {
		cur[0] = i
		for j := 1; j <= len(b); j++ {
			cost := 1
			if a[i-1] == b[j-1] {
				cost = 0
			}
			cur[j] = min(prev[j]+1, cur[j-1]+1, prev[j-1]+cost)
		}
		prev, cur = cur, prev
	}
	return prev[len(b)]
}
