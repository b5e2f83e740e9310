package main

import (
	"regexp"
	"strings"
	"testing"
)

// helpFlag is one "  --name KIND" line of a command's help.
var helpFlag = regexp.MustCompile(`(?m)^  --([a-z0-9-]+)(?: ([A-Z]+))?$`)

// TestHelpListsAcceptedFlags: "COMMAND --help" and "help COMMAND" print the same usage on stdout
// (nothing on stderr, exit 0), and every flag the help lists is accepted: "--flag VALUE --help"
// parses the flag with a value of its kind and then prints the help.
func TestHelpListsAcceptedFlags(t *testing.T) {
	values := map[string]string{"INT": "2", "UINT": "2", "FLOAT": "0.5", "STRING": "x", "DURATION": "1s", "VALUE": "x"}
	for cmd := range commands {
		t.Run(cmd, func(t *testing.T) {
			code, help, errs := run(t, cmd, "--help")
			if code != ExitOK || errs != "" || !strings.HasPrefix(help, "Usage: kgauge "+cmd) {
				t.Fatalf("%s --help: exit %d, stderr %q, stdout starts %.40q", cmd, code, errs, help)
			}
			if code, again, _ := run(t, "help", cmd); code != ExitOK || again != help {
				t.Errorf("help %s differs from %s --help (exit %d)", cmd, cmd, code)
			}
			flags := helpFlag.FindAllStringSubmatch(help, -1)
			if len(flags) < 3 {
				t.Fatalf("%s --help lists %d flags:\n%s", cmd, len(flags), help)
			}
			for _, f := range flags {
				args := []string{cmd, "--" + f[1]}
				if f[2] != "" {
					v, ok := values[f[2]]
					if !ok {
						t.Fatalf("--%s: no test value for kind %s", f[1], f[2])
					}
					args = append(args, v)
				}
				if code, _, errs := run(t, append(args, "--help")...); code != ExitOK {
					t.Errorf("%s: listed in the help but refused: exit %d, %s", strings.Join(args, " "), code, errs)
				}
			}
		})
	}
}

// TestCommandLineConventions: flags after PATHs, "--" ending the flags, one-line usage errors
// with a hint, and --version.
func TestCommandLineConventions(t *testing.T) {
	dir := lake(t, smallLoads())
	code, out, errs := run(t, append(append([]string{"estimate", dir}, quickFlags...), "--json")...)
	if code != ExitOK || !strings.HasPrefix(strings.TrimSpace(out), "{") {
		t.Errorf("estimate PATH --json: exit %d, stdout %.40q, stderr %s", code, out, errs)
	}
	code, _, errs = run(t, "estimate", "--quiet", "--", "--json")
	if code != ExitInput || !strings.Contains(errs, "--json") {
		t.Errorf("estimate -- --json: exit %d, %q; want exit 3 naming the file --json", code, errs)
	}
	for _, args := range [][]string{
		{"estimate", "--no-such-flag", dir},
		{"estimate", dir, "--max-k", "many"},
		{"estimate", dir, "--max-k"},
		{"plan", "--save-sketch", "x.kgs", dir},
		{"track", dir, "--report", "x.html"},
	} {
		code, out, errs := run(t, args...)
		lines := strings.Split(strings.TrimSpace(errs), "\n")
		if code != ExitUsage || out != "" || len(lines) != 1 || !strings.Contains(errs, "--help") {
			t.Errorf("%v: exit %d, stdout %q, stderr %q; want exit 2 and one line with a hint", args, code, out, errs)
		}
	}
	for _, v := range []string{"--version", "version"} {
		if code, out, _ := run(t, v); code != ExitOK || !strings.HasPrefix(out, "kgauge ") {
			t.Errorf("%s: exit %d, %q", v, code, out)
		}
	}
}
