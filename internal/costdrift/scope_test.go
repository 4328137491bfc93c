package costdrift

import (
	"strings"
	"testing"
)

// TestAccountScopeCodesWithSlash: an account code may hold a "/"; a glob in
// analysis.accounts matches it as a whole.
func TestAccountScopeCodesWithSlash(t *testing.T) {
	s, err := ParseAccountScope([]string{"61*", "7000-7999"})
	if err != nil {
		t.Fatal(err)
	}
	for account, want := range map[string]bool{"6100/01": true, "6100": true, "6200/01": false, "7100": true} {
		if got := s.Contains(account); got != want {
			t.Errorf("scope 61*, 7000-7999 contains %q: %v, want %v", account, got, want)
		}
	}
	if _, err := ParseAccountScope([]string{"61[0-"}); err == nil || !strings.Contains(err.Error(), `account pattern "61[0-" is not a valid glob`) {
		t.Errorf("bad glob: %v", err)
	}
}
