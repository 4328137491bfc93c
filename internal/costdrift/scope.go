package costdrift

import (
	"fmt"
	"strconv"
	"strings"
)

// AccountScope selects accounts by patterns: a range "5000-6999" (numeric
// when both ends are numbers, else by text order, both ends included) or a
// Glob such as "61*" or "5???", which matches the whole code ("61*" takes
// "6100/01" too). An empty scope selects every account.
type AccountScope struct {
	patterns []scopePattern
}

type scopePattern struct {
	glob     *Glob
	low, hi  string
	numeric  bool
	lowN, hN int64
}

// ParseAccountScope parses patterns; the error names the bad pattern.
func ParseAccountScope(patterns []string) (AccountScope, error) {
	var s AccountScope
	for _, p := range patterns {
		p = strings.TrimSpace(p)
		if p == "" {
			return AccountScope{}, fmt.Errorf("empty account pattern")
		}
		if lo, hi, ok := strings.Cut(p, "-"); ok && !strings.ContainsAny(p, "*?[") {
			lo, hi = strings.TrimSpace(lo), strings.TrimSpace(hi)
			if lo == "" || hi == "" {
				return AccountScope{}, fmt.Errorf("account range %q needs both ends, like 5000-6999", p)
			}
			sp := scopePattern{low: lo, hi: hi}
			ln, err1 := strconv.ParseInt(lo, 10, 64)
			hn, err2 := strconv.ParseInt(hi, 10, 64)
			if err1 == nil && err2 == nil {
				sp.numeric, sp.lowN, sp.hN = true, ln, hn
				if ln > hn {
					return AccountScope{}, fmt.Errorf("account range %q runs backwards", p)
				}
			} else if lo > hi {
				return AccountScope{}, fmt.Errorf("account range %q runs backwards", p)
			}
			s.patterns = append(s.patterns, sp)
			continue
		}
		g, err := ParseGlob(p)
		if err != nil {
			return AccountScope{}, fmt.Errorf("account pattern %q is not a valid glob: %v", p, err)
		}
		s.patterns = append(s.patterns, scopePattern{glob: &g})
	}
	return s, nil
}

// Contains reports whether account is in scope.
func (s AccountScope) Contains(account string) bool {
	if len(s.patterns) == 0 {
		return true
	}
	for _, p := range s.patterns {
		switch {
		case p.glob != nil:
			if p.glob.Match(account) {
				return true
			}
		case p.numeric:
			if n, err := strconv.ParseInt(account, 10, 64); err == nil && n >= p.lowN && n <= p.hN {
				return true
			}
		default:
			if account >= p.low && account <= p.hi {
				return true
			}
		}
	}
	return false
}
