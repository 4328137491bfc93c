package report

import (
	"bytes"
	"encoding/json"
	"fmt"
	"io"
	"strconv"
	"strings"
	"unicode"
	"unicode/utf8"
)

// TerminalText makes text that comes from the ledger, the activity files
// or the store safe to print as text. An account name can hold an escape
// sequence that clears or rewrites the terminal, or writes its clipboard
// (OSC 52); a tab or a line break would break a table's columns. So every
// control character (C0, DEL and the C1 controls U+0080–U+009F, which some
// terminals obey as the 7-bit sequences), the line and paragraph
// separators, and the bidirectional marks and overrides that reorder what
// is shown are written as Go escapes (\x1b, \a, \n, \u009b, \u202e), and
// each byte that is not UTF-8 as \xNN. Everything else, '<' and '\'
// included, is shown as it is.
func TerminalText(s string) string {
	if utf8.ValidString(s) && !strings.ContainsFunc(s, hiddenRune) {
		return s
	}
	var b strings.Builder
	for i := 0; i < len(s); {
		r, size := utf8.DecodeRuneInString(s[i:])
		switch {
		case r == utf8.RuneError && size == 1:
			fmt.Fprintf(&b, `\x%02x`, s[i])
		case hiddenRune(r):
			q := strconv.QuoteRune(r)
			b.WriteString(q[1 : len(q)-1])
		default:
			b.WriteString(s[i : i+size])
		}
		i += size
	}
	return b.String()
}

// hiddenRune reports a rune that acts on the terminal or on the layout
// instead of being shown.
func hiddenRune(r rune) bool {
	switch {
	case unicode.IsControl(r): // C0, DEL, C1
		return true
	case r == 0x2028 || r == 0x2029: // line and paragraph separators
		return true
	case r == 0x061c || r == 0x200e || r == 0x200f: // bidirectional marks
		return true
	case r >= 0x202a && r <= 0x202e, r >= 0x2066 && r <= 0x2069: // embeddings, overrides, isolates
		return true
	}
	return false
}

// EncodeJSON writes v as indented JSON, '<', '>' and '&' escaped so that
// the output can also be pasted into a web page.
func EncodeJSON(w io.Writer, v any) error { return encodeJSON(w, v, true) }

// encodeJSON writes v as indented JSON. encoding/json escapes the C0
// controls but writes DEL and the C1 controls as they are; those are
// escaped too (\u007f, \u009b), so that JSON printed on a terminal is as
// safe as the text. The value decodes the same.
func encodeJSON(w io.Writer, v any, escapeHTML bool) error {
	var buf bytes.Buffer
	enc := json.NewEncoder(&buf)
	enc.SetIndent("", "  ")
	enc.SetEscapeHTML(escapeHTML)
	if err := enc.Encode(v); err != nil {
		return err
	}
	_, err := w.Write(escapeJSONControls(buf.Bytes()))
	return err
}

// escapeJSONControls rewrites DEL (byte 0x7f) and the C1 controls (UTF-8
// 0xc2 0x80–0x9f) of encoded JSON as \u escapes. The encoder's output is
// valid UTF-8, so these bytes are always those characters, and they can
// only stand inside a string.
func escapeJSONControls(b []byte) []byte {
	if bytes.IndexByte(b, 0x7f) < 0 && !hasC1(b) {
		return b
	}
	out := make([]byte, 0, len(b)+16)
	for i := 0; i < len(b); i++ {
		switch {
		case b[i] == 0x7f:
			out = append(out, `\u007f`...)
		case b[i] == 0xc2 && i+1 < len(b) && b[i+1] >= 0x80 && b[i+1] <= 0x9f:
			out = fmt.Appendf(out, `\u%04x`, rune(b[i+1]))
			i++
		default:
			out = append(out, b[i])
		}
	}
	return out
}

func hasC1(b []byte) bool {
	for i := 0; i+1 < len(b); i++ {
		if b[i] == 0xc2 && b[i+1] >= 0x80 && b[i+1] <= 0x9f {
			return true
		}
	}
	return false
}
