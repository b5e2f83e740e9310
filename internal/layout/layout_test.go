// Package layout holds the test of the module's import direction (DEVELOPERS.md, Architecture):
// it lists every package with "go list" and fails when a forbidden import appears.
package layout

import (
	"bufio"
	"bytes"
	"io"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"testing"
)

const module = "github.com/kgauge/kgauge"

// goList runs "go list" with args from the module root and returns, per package, the imports the
// format lists (space-separated after the package path).
func goList(t *testing.T, args ...string) map[string][]string {
	t.Helper()
	cmd := exec.Command("go", append([]string{"list"}, args...)...)
	cmd.Dir = "../.."
	var stderr bytes.Buffer
	cmd.Stderr = &stderr
	out, err := cmd.Output()
	if err != nil {
		t.Fatalf("go list %v: %v\n%s", args, err, stderr.String())
	}
	pkgs := map[string][]string{}
	sc := bufio.NewScanner(bytes.NewReader(out))
	sc.Buffer(make([]byte, 1<<20), 1<<24)
	for sc.Scan() {
		f := strings.Fields(sc.Text())
		if len(f) > 0 {
			pkgs[f[0]] = f[1:]
		}
	}
	return pkgs
}

// deps returns the packages pkg depends on (non-test, transitively), with build tags tags.
func deps(t *testing.T, pkg string, tags ...string) []string {
	t.Helper()
	args := []string{"-deps", "-f", "{{.ImportPath}}"}
	if len(tags) > 0 {
		args = append(args, "-tags", strings.Join(tags, ","))
	}
	var out []string
	for p := range goList(t, append(args, pkg)...) {
		out = append(out, p)
	}
	return out
}

func under(p, dir string) bool {
	d := module + "/" + dir
	return p == d || strings.HasPrefix(p, d+"/")
}

// TestImportDirection checks the rules of DEVELOPERS.md's layout on the non-test imports:
// bench/ is imported only by cmd/ and bench/ itself; the cost model is a leaf above sketch and
// criteria only; criteria, sketch and internal/kmeans know nothing of files (stream); the root
// package imports no planner, report, ledger, Beam or binary.
func TestImportDirection(t *testing.T) {
	if testing.Short() {
		t.Skip("runs go list over the module")
	}
	imports := goList(t, "-f", "{{.ImportPath}} {{join .Imports \" \"}}", "./...")
	for pkg, imps := range imports {
		for _, imp := range imps {
			switch {
			case under(imp, "bench") && !under(pkg, "cmd") && !under(pkg, "bench"):
				t.Errorf("%s imports %s: only cmd/ and tests may import bench/", pkg, imp)
			case under(pkg, "cost") && strings.HasPrefix(imp, module) && !under(imp, "sketch") && !under(imp, "criteria") && !under(imp, "internal/kmeans"):
				t.Errorf("%s imports %s: the cost model reads sizes from sketch and criteria only", pkg, imp)
			case (under(pkg, "criteria") || under(pkg, "sketch") || under(pkg, "internal/kmeans")) && under(imp, "stream"):
				t.Errorf("%s imports %s: the summary and the criteria do not read files", pkg, imp)
			case pkg == module && (under(imp, "capacity") || under(imp, "report") || under(imp, "ledger") || under(imp, "beam") || under(imp, "cmd")):
				t.Errorf("the root package imports %s: those sit above it", imp)
			case !under(pkg, "cmd") && !under(pkg, "beam") && strings.HasPrefix(imp, "gocloud.dev/blob/") && imp != "gocloud.dev/blob/memblob" && imp != "gocloud.dev/blob/fileblob" && !under(pkg, "stream/objstore/s3"):
				t.Errorf("%s imports the cloud driver %s: drivers are linked by the binaries (stream/objstore/s3)", pkg, imp)
			}
		}
	}
}

// TestLibraryLinksNoCloudSDK: the root package (what a program using kgauge on local files
// compiles) depends on no cloud driver or SDK, and cmd/kgauge links no Beam.
func TestLibraryLinksNoCloudSDK(t *testing.T) {
	if testing.Short() {
		t.Skip("runs go list over the module")
	}
	for _, p := range deps(t, module) {
		if strings.Contains(p, "aws-sdk") || strings.Contains(p, "/aws/") || strings.HasPrefix(p, "cloud.google.com/") ||
			strings.Contains(p, "azure-sdk") || p == "gocloud.dev/blob/s3blob" {
			t.Errorf("the root package depends on %s", p)
		}
	}
	for _, p := range deps(t, module+"/cmd/kgauge") {
		if strings.Contains(p, "apache/beam") {
			t.Errorf("cmd/kgauge depends on %s", p)
		}
	}
}

// TestNoBuildOutputsTracked (issue 16): no file git tracks is a compiled program (an ELF, Mach-O
// or PE header), so a binary built at the root by "go build ./cmd/..." and added by mistake fails
// the tests instead of landing.
func TestNoBuildOutputsTracked(t *testing.T) {
	cmd := exec.Command("git", "ls-files", "-z")
	cmd.Dir = "../.."
	out, err := cmd.Output()
	if err != nil {
		t.Skipf("not a git checkout (%v)", err)
	}
	magics := [][]byte{{0x7f, 'E', 'L', 'F'}, {0xcf, 0xfa, 0xed, 0xfe}, {0xfe, 0xed, 0xfa, 0xcf}, {'M', 'Z'}}
	n := 0
	for _, name := range bytes.Split(out, []byte{0}) {
		if len(name) == 0 {
			continue
		}
		n++
		f, err := os.Open(filepath.Join("../..", string(name)))
		if err != nil {
			continue // deleted in the working tree
		}
		head := make([]byte, 4)
		k, _ := io.ReadFull(f, head)
		f.Close()
		for _, m := range magics {
			if k >= len(m) && bytes.Equal(head[:len(m)], m) {
				t.Errorf("%s is tracked and is a compiled program; build outputs belong in .gitignore", name)
			}
		}
	}
	if n < 50 {
		t.Errorf("git lists %d files; the check is broken", n)
	}
}
