package layout

import (
	"go/ast"
	"go/parser"
	"go/token"
	"io/fs"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
)

// libraryPackages parses the non-test Go files of every package a caller outside the module can
// import (everything but cmd/, bench/, internal/ and testdata) and returns them per directory.
func libraryPackages(t *testing.T) map[string][]*ast.File {
	t.Helper()
	fset := token.NewFileSet()
	pkgs := map[string][]*ast.File{}
	err := filepath.WalkDir("../..", func(path string, d fs.DirEntry, err error) error {
		if err != nil {
			return err
		}
		rel, _ := filepath.Rel("../..", path)
		if d.IsDir() && rel != "." {
			switch top := strings.Split(filepath.ToSlash(rel), "/")[0]; {
			case top == "cmd" || top == "bench" || top == "internal" || d.Name() == "testdata" || strings.HasPrefix(d.Name(), "."):
				return filepath.SkipDir
			}
			return nil
		}
		if d.IsDir() {
			return nil
		}
		if !strings.HasSuffix(path, ".go") || strings.HasSuffix(path, "_test.go") {
			return nil
		}
		f, err := parser.ParseFile(fset, path, nil, parser.SkipObjectResolution)
		if err != nil {
			return err
		}
		pkgs[filepath.Dir(rel)] = append(pkgs[filepath.Dir(rel)], f)
		return nil
	})
	if err != nil {
		t.Fatal(err)
	}
	if len(pkgs) < 5 {
		t.Fatalf("found %d library packages; the walk is broken", len(pkgs))
	}
	return pkgs
}

// internalNames returns the local names under which f imports packages of the module's
// internal/ tree.
func internalNames(f *ast.File) map[string]string {
	names := map[string]string{}
	for _, imp := range f.Imports {
		p, _ := strconv.Unquote(imp.Path.Value)
		if !strings.HasPrefix(p, module+"/internal/") {
			continue
		}
		name := p[strings.LastIndex(p, "/")+1:]
		if imp.Name != nil {
			name = imp.Name.Name
		}
		names[name] = p
	}
	return names
}

// TestExportedAPINamesNoInternalType (issue 16): no exported function, method, type, field,
// variable or constant of a library package has a type spelled with a package of internal/, which
// a caller outside the module could not name. Alias declarations (criteria.Points =
// kmeans.Data) are how such a type is exported, and are allowed.
func TestExportedAPINamesNoInternalType(t *testing.T) {
	for dir, files := range libraryPackages(t) {
		for _, f := range files {
			internal := internalNames(f)
			if len(internal) == 0 {
				continue
			}
			check := func(where string, n ast.Node) {
				if n == nil {
					return
				}
				ast.Inspect(n, func(n ast.Node) bool {
					if sel, ok := n.(*ast.SelectorExpr); ok {
						if id, ok := sel.X.(*ast.Ident); ok {
							if p, ok := internal[id.Name]; ok {
								t.Errorf("%s: exported %s uses %s.%s from %s", dir, where, id.Name, sel.Sel.Name, p)
							}
						}
					}
					return true
				})
			}
			for _, decl := range f.Decls {
				switch d := decl.(type) {
				case *ast.FuncDecl:
					if !d.Name.IsExported() {
						continue
					}
					if d.Recv != nil {
						recv := d.Recv.List[0].Type
						if st, ok := recv.(*ast.StarExpr); ok {
							recv = st.X
						}
						if id, ok := recv.(*ast.Ident); ok && !id.IsExported() {
							continue
						}
					}
					check("func "+d.Name.Name, d.Type)
				case *ast.GenDecl:
					for _, spec := range d.Specs {
						switch s := spec.(type) {
						case *ast.TypeSpec:
							if !s.Name.IsExported() || s.Assign.IsValid() {
								continue
							}
							if st, ok := s.Type.(*ast.StructType); ok {
								for _, fld := range st.Fields.List {
									for _, name := range fld.Names {
										if name.IsExported() {
											check("field "+s.Name.Name+"."+name.Name, fld.Type)
										}
									}
									if len(fld.Names) == 0 {
										check("embedded field of "+s.Name.Name, fld.Type)
									}
								}
								continue
							}
							check("type "+s.Name.Name, s.Type)
						case *ast.ValueSpec:
							for _, name := range s.Names {
								if name.IsExported() {
									check("value "+name.Name, s.Type)
								}
							}
						}
					}
				}
			}
		}
	}
}

// TestSentinelsNamePackage (issue 16): every exported sentinel error of a library package
// (var ErrX = errors.New("...")) starts its message with its package's name, as Go packages do
// ("bufio: buffer full"), so a program using the library can tell where it arose. The binaries
// remove these prefixes from what a person reads (internal/errtext).
func TestSentinelsNamePackage(t *testing.T) {
	n := 0
	for dir, files := range libraryPackages(t) {
		for _, f := range files {
			for _, decl := range f.Decls {
				d, ok := decl.(*ast.GenDecl)
				if !ok || d.Tok != token.VAR {
					continue
				}
				for _, spec := range d.Specs {
					s := spec.(*ast.ValueSpec)
					for i, name := range s.Names {
						if !name.IsExported() || !strings.HasPrefix(name.Name, "Err") || i >= len(s.Values) {
							continue
						}
						call, ok := s.Values[i].(*ast.CallExpr)
						if !ok || len(call.Args) != 1 {
							continue
						}
						lit, ok := call.Args[0].(*ast.BasicLit)
						if !ok {
							continue
						}
						msg, _ := strconv.Unquote(lit.Value)
						n++
						if !strings.HasPrefix(msg, f.Name.Name+": ") {
							t.Errorf("%s: %s = %q does not start with %q", dir, name.Name, msg, f.Name.Name+": ")
						}
					}
				}
			}
		}
	}
	if n < 20 {
		t.Errorf("found %d sentinels; the scan is broken", n)
	}
}
