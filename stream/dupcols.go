package stream

import (
	"errors"
	"fmt"
	"slices"
	"strings"
)

// ErrDuplicateColumn means a file holds two top-level columns of the same name, one of which
// would be a feature: which one a name means is ambiguous, so it is an error, never a guess.
var ErrDuplicateColumn = errors.New("stream: duplicate column name")

// checkDuplicateNames fails when the file at path has two columns of one name and that name is
// named in columns, or, with no columns named, when one of them is numeric (a feature by
// default). Duplicates of columns that are not features are left alone (listed once as ignored).
func checkDuplicateNames(path string, cols []colInfo, columns []string) error {
	at := make(map[string][]int, len(cols))
	for i, c := range cols {
		at[c.name] = append(at[c.name], i)
	}
	for _, c := range cols {
		idx := at[c.name]
		if len(idx) < 2 {
			continue
		}
		feature := slices.Contains(columns, c.name)
		if len(columns) == 0 {
			for _, i := range idx {
				feature = feature || cols[i].reason == ""
			}
		}
		if !feature {
			continue
		}
		pos := make([]string, len(idx))
		for k, i := range idx {
			pos[k] = fmt.Sprint(i + 1)
		}
		return newError(path, c.name, fmt.Errorf("%w: %d columns have this name (positions %s); rename them",
			ErrDuplicateColumn, len(idx), strings.Join(pos, ", ")))
	}
	return nil
}
