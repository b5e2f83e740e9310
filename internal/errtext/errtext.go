// Package errtext turns kgauge's error messages into the one line a user reads.
//
// The library's sentinel errors carry their package in their text, as Go packages do
// ("stream: unknown column"), so a program using the library can tell where an error arose. A
// person running kgauge named files, columns and flags, not packages: Line keeps the message on
// one line and removes those package prefixes. The binaries, the ledger's failure reasons and the
// skipped-file reasons of discovery all speak through it.
package errtext

import (
	"os"
	"regexp"
	"strings"
)

// packagePrefix matches the name of one of kgauge's packages at the start of a message or of one
// of its parts ("sketch: ", "; criteria: "), which says where in the code it arose.
var packagePrefix = regexp.MustCompile(`(^|: |; )(?:stream|criteria|sketch|ledger|lake|objstore|s3|model|beam|kgauge|cost|capacity|reduce|report|atomicfile): `)

// Line returns msg on one line (runs of white space, newlines included, become one space) without
// package prefixes. A prefix that names an existing file or directory is the user's own term
// and is kept ("model: not a Parquet or Arrow IPC file" for a file called model).
func Line(msg string) string {
	msg = strings.Join(strings.Fields(msg), " ")
	for {
		out := packagePrefix.ReplaceAllStringFunc(msg, func(m string) string {
			sep, word := "", m
			for _, p := range []string{": ", "; "} {
				if strings.HasPrefix(m, p) {
					sep, word = p, m[len(p):]
				}
			}
			if _, err := os.Lstat(strings.TrimSuffix(word, ": ")); err == nil {
				return m
			}
			return sep
		})
		if out == msg {
			return out
		}
		msg = out
	}
}

// Of returns Line(err.Error()), or "" for a nil error.
func Of(err error) string {
	if err == nil {
		return ""
	}
	return Line(err.Error())
}
