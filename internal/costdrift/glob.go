package costdrift

import (
	"errors"
	"fmt"
	"unicode/utf8"
)

// Glob is a pattern over a whole code, an account or a cost centre, as
// analysis.accounts and the recipients' lists write it:
//
//	pattern  matches
//	"*"      any run of characters, even none, "/" among them
//	"?"      any one character (a letter such as ü is one)
//	"[a-z]"  one character of a class; "[^a-z]" one outside it
//	"\c"     the character c itself, for a literal *, ?, [ or \
//
// A code is not a path: "/" is a character like any other, so "*" matches
// "PLANT/2" and "61*" matches "6100/01" (path.Match stops "*" at "/"). A
// code spelled exactly as the pattern matches too, so that a code holding
// *, ?, [ or \ can be named as it is written in the ledger.
type Glob struct {
	text  string
	elems []globElem
}

type globKind uint8

const (
	globLiteral globKind = iota // r itself
	globOne                     // ?
	globAny                     // *
	globClass                   // [...]
)

type globElem struct {
	kind    globKind
	r       rune
	negated bool
	ranges  [][2]rune // inclusive
}

// ParseGlob checks and compiles a pattern; the error says what is wrong
// with it, for the caller to name the key or the pattern.
func ParseGlob(pattern string) (Glob, error) {
	g := Glob{text: pattern}
	for i := 0; i < len(pattern); {
		r, n := utf8.DecodeRuneInString(pattern[i:])
		i += n
		switch r {
		case '*':
			if k := len(g.elems); k == 0 || g.elems[k-1].kind != globAny { // ** is *
				g.elems = append(g.elems, globElem{kind: globAny})
			}
		case '?':
			g.elems = append(g.elems, globElem{kind: globOne})
		case '\\':
			if i == len(pattern) {
				return Glob{}, errors.New(`it ends in a lone \ (write \\ for a backslash)`)
			}
			r, n = utf8.DecodeRuneInString(pattern[i:])
			i += n
			g.elems = append(g.elems, globElem{kind: globLiteral, r: r})
		case '[':
			e, next, err := parseClass(pattern, i)
			if err != nil {
				return Glob{}, err
			}
			g.elems = append(g.elems, e)
			i = next
		default:
			g.elems = append(g.elems, globElem{kind: globLiteral, r: r})
		}
	}
	return g, nil
}

// parseClass reads a class whose "[" ends just before i, returning it and
// the index just past its "]".
func parseClass(p string, i int) (globElem, int, error) {
	open := i - 1
	e := globElem{kind: globClass}
	if i < len(p) && p[i] == '^' {
		e.negated = true
		i++
	}
	// one reads a member: a character, or \ and the character it escapes.
	one := func() (rune, error) {
		if i >= len(p) {
			return 0, fmt.Errorf("the class opened by [ at byte %d is not closed", open)
		}
		r, n := utf8.DecodeRuneInString(p[i:])
		switch r {
		case '\\':
			if i+n >= len(p) {
				return 0, fmt.Errorf("the class opened by [ at byte %d is not closed", open)
			}
			r, m := utf8.DecodeRuneInString(p[i+n:])
			i += n + m
			return r, nil
		case '-':
			return 0, fmt.Errorf(`in the class opened by [ at byte %d, a "-" must be written \- unless it joins two characters`, open)
		case ']':
			return 0, fmt.Errorf("the class opened by [ at byte %d is empty (write \\] for a literal ])", open)
		}
		i += n
		return r, nil
	}
	for {
		if i >= len(p) {
			return e, 0, fmt.Errorf("the class opened by [ at byte %d is not closed", open)
		}
		if p[i] == ']' && len(e.ranges) > 0 {
			return e, i + 1, nil
		}
		lo, err := one()
		if err != nil {
			return e, 0, err
		}
		hi := lo
		if i < len(p) && p[i] == '-' {
			i++
			if i < len(p) && p[i] == ']' {
				return e, 0, fmt.Errorf(`in the class opened by [ at byte %d, a "-" must be written \- unless it joins two characters`, open)
			}
			if hi, err = one(); err != nil {
				return e, 0, err
			}
			if hi < lo {
				return e, 0, fmt.Errorf("the range %c-%c in the class opened by [ at byte %d runs backwards", lo, hi, open)
			}
		}
		e.ranges = append(e.ranges, [2]rune{lo, hi})
	}
}

// String returns the pattern as written.
func (g Glob) String() string { return g.text }

// Match reports whether the whole code matches the pattern.
func (g Glob) Match(code string) bool {
	if code == g.text {
		return true
	}
	s := []rune(code)
	// Each element but * takes exactly one character, so on a mismatch it
	// is enough to let the latest * take one character more and go on from
	// there (the usual wildcard matching; time at most len(pattern) ×
	// len(code)).
	pi, si := 0, 0
	starP, starS := -1, 0
	for si < len(s) {
		if pi < len(g.elems) {
			e := g.elems[pi]
			if e.kind == globAny {
				starP, starS = pi, si
				pi++
				continue
			}
			if e.matches(s[si]) {
				pi++
				si++
				continue
			}
		}
		if starP < 0 {
			return false
		}
		starS++
		pi, si = starP+1, starS
	}
	for pi < len(g.elems) && g.elems[pi].kind == globAny {
		pi++
	}
	return pi == len(g.elems)
}

func (e globElem) matches(r rune) bool {
	switch e.kind {
	case globOne:
		return true
	case globLiteral:
		return r == e.r
	default: // globClass
		in := false
		for _, rg := range e.ranges {
			if rg[0] <= r && r <= rg[1] {
				in = true
				break
			}
		}
		return in != e.negated
	}
}
