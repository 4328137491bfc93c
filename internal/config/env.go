package config

import (
	"errors"
	"fmt"
	"sort"
	"strconv"
	"strings"
)

// FileEnv names the variable that gives the config file's path when no
// --config is passed. It sets no key, so it is never warned about.
const FileEnv = EnvPrefix + "_CONFIG"

// testEnvPrefix starts the variables the test suite sets for itself (the
// child processes of a test run load configs too); they set no key and are
// never warned about.
const testEnvPrefix = EnvPrefix + "_TEST_"

// environment stands in an Error for the file when the value came from an
// environment variable: the file holds nothing wrong.
const environment = "environment"

// envName is the variable that overrides a declared key: analysis.window
// is COSTDRIFT_ANALYSIS_WINDOW.
func envName(key string) string {
	return EnvPrefix + "_" + strings.ToUpper(strings.ReplaceAll(key, ".", "_"))
}

// envKeys are the declared keys by the variable that overrides each. Only
// they can be set from the environment: a list of records (sources,
// recipients) is not one value a variable could hold.
func envKeys() map[string]key {
	m := make(map[string]key, len(keys))
	for _, k := range keys {
		m[envName(k.name)] = k
	}
	return m
}

// applyEnvironment sets on v every declared key whose variable lookup
// finds non-empty (an empty variable is taken as unset, so that exporting
// NAME= does not blank a key). It returns the variable behind each key it
// set, or an Error naming the first variable whose text is not a value of
// its key's type.
func applyEnvironment(set func(key string, value any), lookup func(string) (string, bool)) (map[string]string, error) {
	fromEnv := map[string]string{}
	for _, k := range keys {
		name := envName(k.name)
		text, ok := lookup(name)
		if !ok || text == "" {
			continue
		}
		value, problem := parseEnv(k, text)
		if problem != "" {
			shown := strconv.Quote(text)
			if k.secret {
				shown = redacted
			}
			return nil, &Error{Key: name, Msg: problem + ", not " + shown, File: environment}
		}
		set(k.name, value)
		fromEnv[k.name] = name
	}
	return fromEnv, nil
}

// parseEnv reads a variable's text as a value of the type of k's default;
// lists are comma-separated. It returns what the text must be when it is
// not such a value.
func parseEnv(k key, text string) (any, string) {
	switch k.def.(type) {
	case string:
		return text, ""
	case int:
		n, err := strconv.Atoi(strings.TrimSpace(text))
		if err != nil {
			return nil, "must be a whole number"
		}
		return n, ""
	case float64:
		x, err := strconv.ParseFloat(strings.TrimSpace(text), 64)
		if err != nil {
			return nil, "must be a number"
		}
		return x, ""
	case bool:
		b, err := strconv.ParseBool(strings.TrimSpace(text))
		if err != nil {
			return nil, "must be true or false"
		}
		return b, ""
	case []string:
		return listItems(text), ""
	case []int:
		items := listItems(text)
		out := make([]int, len(items))
		for i, s := range items {
			n, err := strconv.Atoi(s)
			if err != nil {
				return nil, "must be whole numbers separated by commas, such as 0,1"
			}
			out[i] = n
		}
		return out, ""
	}
	panic(fmt.Sprintf("config: key %s is of type %T, which the environment cannot set", k.name, k.def))
}

// listItems splits comma-separated text into its non-empty items, trimmed.
func listItems(text string) []string {
	out := []string{}
	for _, s := range strings.Split(text, ",") {
		if s = strings.TrimSpace(s); s != "" {
			out = append(out, s)
		}
	}
	return out
}

// blameEnvironment names the variable instead of the key and the file when
// the key that err reports was set from the environment.
func blameEnvironment(err error, fromEnv map[string]string) error {
	var e *Error
	if errors.As(err, &e) {
		if name, ok := fromEnv[e.Key]; ok {
			e.Key, e.File = name, environment
		}
	}
	return err
}

// envWarnings returns a warning for each COSTDRIFT_ variable in environ
// (NAME=value pairs) that nothing reads: one that sets no key, and is not
// the config file's path, the SMTP password under its default name or the
// name c gives it, a SQL source's connection string, or the test suite's.
// A typo there would otherwise leave its key at the file's value unseen.
func envWarnings(environ []string, c *Config) []string {
	known := envKeys()
	read := map[string]bool{FileEnv: true, c.Mail.SMTP.PasswordEnv: true}
	for _, k := range keys {
		if k.name == "mail.smtp.password_env" {
			read[k.def.(string)] = true
		}
	}
	for _, list := range [][]Source{c.Sources.Ledger, c.Sources.Activity, c.Sources.Accounts} {
		for _, s := range list {
			read[s.DSNEnv] = true
		}
	}
	var out []string
	for _, kv := range environ {
		name, _, _ := strings.Cut(kv, "=")
		if _, isKey := known[name]; isKey || read[name] || !strings.HasPrefix(name, EnvPrefix+"_") || strings.HasPrefix(name, testEnvPrefix) {
			continue
		}
		if near := nearestVariable(name); near != "" {
			out = append(out, fmt.Sprintf("%s matches no key; did you mean %s?", name, near))
		} else {
			out = append(out, name+" matches no key that the environment can set; it is ignored")
		}
	}
	sort.Strings(out)
	return out
}

// nearestVariable returns the variable of a declared key that name most
// likely meant: the nearest by edit distance, at most two edits away
// (letter case aside), or else the only one that ends in name's words, as
// COSTDRIFT_MAIL_SMTP_HOST ends in SMTP_HOST; "" when there is none.
func nearestVariable(name string) string {
	words := strings.ToLower(strings.TrimPrefix(name, EnvPrefix+"_"))
	best, bestDist := "", 3
	var endsIn []string
	for _, k := range keys {
		kw := strings.ToLower(strings.TrimPrefix(envName(k.name), EnvPrefix+"_"))
		if d := editDistance(words, kw); d < bestDist {
			best, bestDist = envName(k.name), d
		}
		if strings.HasSuffix(kw, "_"+words) {
			endsIn = append(endsIn, envName(k.name))
		}
	}
	if best == "" && len(endsIn) == 1 {
		return endsIn[0]
	}
	return best
}
