package costdrift

import (
	"strings"
	"testing"
)

// TestGlobMatchesWholeCode: a code is matched as a whole; "/" and "\" are
// ordinary characters of a code, not path separators or escapes of the
// code. The expected results are hand-worked from the rules in the README
// (Mail: "*" any run of characters, "/" included; "?" one character;
// "[…]" one character of a class; "\" makes the next pattern character
// literal; the code spelled exactly as the pattern always matches).
func TestGlobMatchesWholeCode(t *testing.T) {
	for _, tc := range []struct {
		pattern, code string
		want          bool
	}{
		{"*", "PLANT/2", true},
		{"*", "", true},
		{"PLANT/*", "PLANT/2", true},
		{"PLANT/*", "PLANT/2/B", true},
		{"PLANT*", "PLANT/2", true},
		{"OTHER*", "PLANT/2", false},
		{"*/2", "PLANT/2", true},
		{"PLANT?2", "PLANT/2", true},
		{"PLANT?2", "PLANT/22", false},
		{"6100/01", "6100/01", true},
		{"61*", "6100/01", true},
		{"61??/??", "6100/01", true},
		{"61??", "6100/01", false},
		{"WE*", "WELD", true},
		{"we*", "WELD", false},           // case matters, as in the ledger
		{"*", `HALL\3`, true},            // a backslash in a code
		{`HALL\\*`, `HALL\3`, true},      // written \\ in a pattern
		{`HALL\3`, `HALL\3`, true},       // or the code spelled as it is
		{"Lager *", "Lager Süd", true},   // spaces and letters beyond ASCII
		{"Lager S?d", "Lager Süd", true}, // ? is one character, not one byte
		{"Lager S??d", "Lager Süd", false},
		{"[A-C]*", "BODY", true},
		{"[A-C]*", "DOOR", false},
		{"[^A-C]*", "DOOR", true},
		{"[/]*", "/ROOT", true},
		{`X\[1]`, "X[1]", true},
		{"X[1]", "X[1]", true}, // the code spelled as the pattern
		{"X[1]", "X1", true},
		{"X[1]", "X2", false},
		{"*1*", "ABC", false},
		{"a*b*c", "a/x/b/y/c", true},
		{"a*b*c", "a/x/b/y/d", false},
	} {
		g, err := ParseGlob(tc.pattern)
		if err != nil {
			t.Errorf("ParseGlob(%q): %v", tc.pattern, err)
			continue
		}
		if got := g.Match(tc.code); got != tc.want {
			t.Errorf("%q matches %q: %v, want %v", tc.pattern, tc.code, got, tc.want)
		}
	}
}

func TestGlobRefusesBadPatterns(t *testing.T) {
	for pattern, want := range map[string]string{
		"X[1":    "is not closed",
		"X[]":    "is empty",
		`X\`:     `ends in a lone \`,
		"[a-":    "is not closed",
		"[-a]":   `"-" must be written \-`,
		"[a-]":   `"-" must be written \-`,
		"[^]x]":  "is empty",
		"[z-a]x": "runs backwards",
	} {
		_, err := ParseGlob(pattern)
		if err == nil || !strings.Contains(err.Error(), want) {
			t.Errorf("ParseGlob(%q) = %v, want an error with %q", pattern, err, want)
		}
	}
}
