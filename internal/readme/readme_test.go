package readme

import (
	"bufio"
	"context"
	"fmt"
	"os"
	"os/exec"
	"path/filepath"
	"regexp"
	"strconv"
	"strings"
	"testing"
	"time"
)

// readmeCommand is one command of a README shell block, as a reader would type it.
type readmeCommand struct {
	line     int    // line of README.md where it starts
	text     string // the command, continuation lines joined, trailing comment removed
	wantExit int    // 0 unless the comment says "exits N"
}

// readmeBlock is one ```sh block of README.md.
type readmeBlock struct {
	line     int
	skip     string // the reason given by a "<!-- readme-test: skip REASON -->" line just above it
	commands []readmeCommand
}

var (
	skipMarker = regexp.MustCompile(`^<!--\s*readme-test:\s*skip\s+(.*?)\s*-->$`)
	exitNote   = regexp.MustCompile(`\bexits (\d+)\b`)
)

// parseReadme returns the shell blocks of a README in order.
func parseReadme(path string) ([]readmeBlock, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, err
	}
	defer f.Close()
	var (
		blocks  []readmeBlock
		cur     *readmeBlock
		prev    string // the last non-blank line outside a block
		pending string // a command continued with a backslash
		start   int
	)
	sc := bufio.NewScanner(f)
	for n := 1; sc.Scan(); n++ {
		line := sc.Text()
		trimmed := strings.TrimSpace(line)
		if cur == nil {
			if trimmed == "```sh" {
				cur = &readmeBlock{line: n}
				if m := skipMarker.FindStringSubmatch(prev); m != nil {
					cur.skip = m[1]
				}
			} else if trimmed != "" {
				prev = trimmed
			}
			continue
		}
		if trimmed == "```" {
			if pending != "" {
				return nil, fmt.Errorf("README.md:%d: block ends inside a continued command", n)
			}
			blocks = append(blocks, *cur)
			cur, prev = nil, ""
			continue
		}
		if pending == "" && (trimmed == "" || strings.HasPrefix(trimmed, "#")) {
			continue
		}
		if pending == "" {
			start = n
		}
		if strings.HasSuffix(trimmed, `\`) {
			pending += strings.TrimSpace(strings.TrimSuffix(trimmed, `\`)) + " "
			continue
		}
		full := pending + trimmed
		pending = ""
		cmd := readmeCommand{line: start, text: full}
		if i := commentStart(full); i >= 0 {
			if m := exitNote.FindStringSubmatch(full[i:]); m != nil {
				cmd.wantExit, _ = strconv.Atoi(m[1])
			}
			cmd.text = strings.TrimSpace(full[:i])
		}
		cur.commands = append(cur.commands, cmd)
	}
	if err := sc.Err(); err != nil {
		return nil, err
	}
	if cur != nil {
		return nil, fmt.Errorf("README.md:%d: unterminated block", cur.line)
	}
	return blocks, nil
}

// commentStart returns the index of a shell comment ("#" after a blank, outside quotes) in s, or -1.
func commentStart(s string) int {
	var quote rune
	for i, r := range s {
		switch {
		case quote != 0:
			if r == quote {
				quote = 0
			}
		case r == '\'' || r == '"':
			quote = r
		case r == '#' && i > 0 && (s[i-1] == ' ' || s[i-1] == '\t'):
			return i
		}
	}
	return -1
}

// readmeRows caps the sizes the README asks synth for, so that the walkthrough runs in seconds; the
// commands are otherwise run exactly as printed.
var readmeRows = regexp.MustCompile(`--rows (\d+)`)

const readmeMaxRows = 20000

// TestReadmeCommands runs every shell block of README.md in order, as a new user would, in one
// temporary folder: `go build` and `go run` lines from the repository root (their -o outputs land
// in the folder), everything else with bash in the folder. A command must exit 0, or the code its
// comment names ("exits 5"). Blocks marked `<!-- readme-test: skip REASON -->` need what a test
// machine does not have (a cluster, a cloud bucket) and are listed as skipped. `go test` lines
// are this test's own command and are not run again. synth's --rows is capped at 20,000.
func TestReadmeCommands(t *testing.T) {
	if testing.Short() {
		t.Skip("runs the README walkthrough against a built binary")
	}
	root, err := filepath.Abs(filepath.Join("..", ".."))
	if err != nil {
		t.Fatal(err)
	}
	blocks, err := parseReadme(filepath.Join(root, "README.md"))
	if err != nil {
		t.Fatal(err)
	}
	work := t.TempDir()
	ran := 0
	for _, b := range blocks {
		if b.skip != "" {
			t.Logf("README.md:%d: block skipped: %s", b.line, b.skip)
			continue
		}
		for _, c := range b.commands {
			if strings.HasPrefix(c.text, "go test") {
				continue
			}
			code, out := runReadmeCommand(t, root, work, c.text)
			if code != c.wantExit {
				t.Fatalf("README.md:%d: %s\nexit %d, want %d\n%s", c.line, c.text, code, c.wantExit, out)
			}
			ran++
		}
	}
	if ran < 10 {
		t.Fatalf("ran only %d README commands; the parser lost some", ran)
	}
}

// runReadmeCommand runs one README command and returns its exit code and combined output.
func runReadmeCommand(t *testing.T, root, work, text string) (int, string) {
	t.Helper()
	ctx, cancel := context.WithTimeout(context.Background(), 5*time.Minute)
	defer cancel()
	var cmd *exec.Cmd
	fields := strings.Fields(text)
	if len(fields) > 1 && fields[0] == "go" && (fields[1] == "build" || fields[1] == "run") {
		for i := 2; i+1 < len(fields); i++ {
			if fields[i] == "-o" {
				fields[i+1] = filepath.Join(work, fields[i+1])
			}
		}
		cmd = exec.CommandContext(ctx, "go", fields[1:]...)
		cmd.Dir = root
	} else {
		text = readmeRows.ReplaceAllStringFunc(text, func(m string) string {
			n, _ := strconv.Atoi(strings.TrimPrefix(m, "--rows "))
			return fmt.Sprintf("--rows %d", min(n, readmeMaxRows))
		})
		cmd = exec.CommandContext(ctx, "bash", "-c", text)
		cmd.Dir = work
	}
	out, err := cmd.CombinedOutput()
	if err != nil {
		if ee, ok := err.(*exec.ExitError); ok {
			return ee.ExitCode(), string(out)
		}
		t.Fatalf("%s: %v", text, err)
	}
	return 0, string(out)
}

// TestParseReadme checks the block parser on a small README: skip markers, continuation lines,
// trailing comments with and without an exit note, and # inside quotes.
func TestParseReadme(t *testing.T) {
	src := "intro\n\n```sh\n./kgauge a   # first\n./kgauge b \\\n  --c 'x#y' # exits 5\n# a comment line\n```\n" +
		"<!-- readme-test: skip needs a cluster -->\n\n```sh\n./kgauge-beam --runner=flink\n```\n"
	p := filepath.Join(t.TempDir(), "README.md")
	if err := os.WriteFile(p, []byte(src), 0o644); err != nil {
		t.Fatal(err)
	}
	blocks, err := parseReadme(p)
	if err != nil {
		t.Fatal(err)
	}
	if len(blocks) != 2 {
		t.Fatalf("%d blocks, want 2", len(blocks))
	}
	want := []readmeCommand{{line: 4, text: "./kgauge a"}, {line: 5, text: "./kgauge b --c 'x#y'", wantExit: 5}}
	if fmt.Sprint(blocks[0].commands) != fmt.Sprint(want) || blocks[0].skip != "" {
		t.Errorf("first block %+v, want commands %+v", blocks[0], want)
	}
	if blocks[1].skip != "needs a cluster" || len(blocks[1].commands) != 1 {
		t.Errorf("second block %+v, want one command skipped for a cluster", blocks[1])
	}
}
