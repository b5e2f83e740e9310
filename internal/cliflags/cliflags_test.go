package cliflags

import (
	"errors"
	"flag"
	"io"
	"strings"
	"testing"
)

func TestOptions(t *testing.T) {
	for _, tc := range []struct {
		args []string
		want string // "" = no error, else text the usage error must contain
	}{
		{nil, ""},
		{[]string{"--columns", "h00, h01", "--scale", "range", "--memory", "512MiB"}, ""},
		{[]string{"--coreset", "0"}, "--coreset must be 2 to 4194304"},
		{[]string{"--memory", "99999999999TiB"}, "--memory"},
		{[]string{"--memory", "NaN"}, "--memory"},
		{[]string{"--restarts", "1000000"}, "--restarts must be 1 to 100"},
		{[]string{"--gap-refs", "-2"}, "--gap-refs"},
		{[]string{"--scale", "cubic"}, "--scale"},
		{[]string{"--memory", "lots"}, "--memory"},
		{[]string{"--columns", " , "}, "--columns"},
		{[]string{"--min-k", "5", "--max-k", "3"}, "--max-k"},
	} {
		fs := flag.NewFlagSet("t", flag.ContinueOnError)
		fs.SetOutput(io.Discard)
		var d Data
		d.Register(fs)
		if err := fs.Parse(tc.args); err != nil {
			t.Fatal(err)
		}
		o, err := d.Options()
		var ue *UsageError
		switch {
		case tc.want == "" && err != nil:
			t.Errorf("%v: %v", tc.args, err)
		case tc.want != "" && (!errors.As(err, &ue) || !strings.Contains(err.Error(), tc.want)):
			t.Errorf("%v: got %v, want a usage error naming %q", tc.args, err, tc.want)
		case tc.want == "" && len(tc.args) > 0 && (len(o.Columns) != 2 || o.Columns[1] != "h01" || o.Memory != 512<<20 || o.Scale != "range"):
			t.Errorf("%v: options %+v", tc.args, o)
		}
	}
}
