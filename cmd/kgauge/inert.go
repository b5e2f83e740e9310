package main

import (
	"strconv"
	"strings"
	"unicode"
	"unicode/utf8"
)

// inert returns s with every control character (C0 and C1, DEL, and the line and paragraph
// separators) and every invalid UTF-8 byte written as a Go escape (\x1b, \u2028), so that text
// from files, such as column names, paths and partition values, cannot move the cursor, recolour
// or retitle a terminal, or break a line. Printable text, spaces included, is unchanged.
func inert(s string) string {
	clean := true
	for i, r := range s {
		if r == utf8.RuneError || !safeRune(r) {
			if r != utf8.RuneError || !strings.HasPrefix(s[i:], string(utf8.RuneError)) {
				clean = false
				break
			}
		}
	}
	if clean {
		return s
	}
	var b strings.Builder
	for i := 0; i < len(s); {
		r, n := utf8.DecodeRuneInString(s[i:])
		switch {
		case r == utf8.RuneError && n <= 1:
			b.WriteString(`\x` + strconv.FormatUint(uint64(s[i])|0x100, 16)[1:])
		case safeRune(r):
			b.WriteString(s[i : i+n])
		default:
			q := strconv.QuoteRuneToASCII(r)
			b.WriteString(q[1 : len(q)-1])
		}
		i += n
	}
	return b.String()
}

// safeRune reports whether r may reach a terminal as it is.
func safeRune(r rune) bool {
	return r == ' ' || r == '\t' || !(unicode.IsControl(r) || r == '\u2028' || r == '\u2029' || unicode.Is(unicode.Bidi_Control, r))
}

// inertAll applies inert to each string.
func inertAll(v []string) []string {
	out := make([]string, len(v))
	for i, s := range v {
		out[i] = inert(s)
	}
	return out
}
