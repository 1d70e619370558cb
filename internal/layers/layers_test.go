package layers

import (
	"go/build"
	"io/fs"
	"path/filepath"
	"slices"
	"strings"
	"testing"

	"chord/internal/testenv"
)

// allowed lists, for every package of chord, the packages of chord it may
// import (its non-test files): the arrows of docs/design.md,
//
//	cmd -> campaign -> {retrieve, simulate} -> report -> {config, chains} -> obs
//	    -> {forward, priors, sampler},  forward -> forward/opacity,
//
// skipping layers downward. sampler and priors import nothing of chord's;
// every package may import chord/internal/..., which imports only itself.
// A name ending in "/..." stands for the package and those below it.
var allowed = map[string][]string{
	"chord/cmd/chord":           {"chord/campaign", "chord/retrieve", "chord/simulate", "chord/report", "chord/config", "chord/chains", "chord/obs", "chord/forward", "chord/forward/opacity/...", "chord/priors", "chord/sampler"},
	"chord/benchmarks":          {},
	"chord/campaign":            {"chord/retrieve", "chord/simulate", "chord/report", "chord/config", "chord/chains", "chord/obs", "chord/forward", "chord/forward/opacity/...", "chord/priors", "chord/sampler"},
	"chord/retrieve":            {"chord/report", "chord/config", "chord/chains", "chord/obs", "chord/forward", "chord/forward/opacity/...", "chord/priors", "chord/sampler"},
	"chord/simulate":            {"chord/config", "chord/obs", "chord/forward", "chord/forward/opacity/..."},
	"chord/report":              {"chord/config", "chord/chains", "chord/obs", "chord/forward", "chord/sampler"},
	"chord/config":              {"chord/obs", "chord/forward", "chord/forward/opacity/...", "chord/priors"},
	"chord/chains":              {"chord/sampler"},
	"chord/obs":                 {"chord/forward"},
	"chord/forward":             {"chord/forward/opacity"},
	"chord/forward/opacity":     {},
	"chord/forward/opacity/...": {"chord/forward/opacity/..."},
	"chord/priors":              {},
	"chord/sampler":             {},
	"chord/sampler/targets":     {"chord/sampler"},
	"chord/internal/...":        {},
}

// match reports whether the package path p is named by pattern.
func match(pattern, p string) bool {
	if base, ok := strings.CutSuffix(pattern, "/..."); ok {
		return p == base || strings.HasPrefix(p, base+"/")
	}
	return p == pattern
}

// rule returns the allowed imports of package p, and whether p is listed:
// an exact entry wins over a pattern.
func rule(p string) ([]string, bool) {
	if imps, ok := allowed[p]; ok {
		return imps, true
	}
	for pat, imps := range allowed {
		if match(pat, p) {
			return imps, true
		}
	}
	return nil, false
}

// TestForwardDependsOnGonumAlone: the forward model's whole dependency
// closure is the standard library, gonum and chord/forward/opacity (no
// Parquet, compression, progress-bar or terminal package): the codecs and
// builders live in opacity's subpackages.
func TestForwardDependsOnGonumAlone(t *testing.T) {
	root := testenv.RepoRoot(t)
	seen := map[string]bool{}
	var walk func(imp string)
	walk = func(imp string) {
		if seen[imp] || imp == "C" {
			return
		}
		seen[imp] = true
		pkg, err := build.Import(imp, root, 0)
		if err != nil {
			t.Fatalf("%s: %v", imp, err)
		}
		if pkg.Goroot {
			return
		}
		switch {
		case imp == "chord/forward", imp == "chord/forward/opacity", strings.HasPrefix(imp, "gonum.org/v1/gonum/"):
		default:
			t.Errorf("chord/forward depends on %s", imp)
			return
		}
		for _, i := range pkg.Imports {
			walk(i)
		}
	}
	walk("chord/forward")
}

// TestImportArrows fails on any import between chord's packages that the
// design does not allow, and on a package the list above does not name.
func TestImportArrows(t *testing.T) {
	root := testenv.RepoRoot(t)
	n := 0
	err := filepath.WalkDir(root, func(path string, d fs.DirEntry, err error) error {
		if err != nil {
			return err
		}
		if !d.IsDir() {
			return nil
		}
		if name := d.Name(); path != root && (name == "testdata" || strings.HasPrefix(name, ".") || strings.HasPrefix(name, "_")) {
			return filepath.SkipDir
		}
		pkg, err := build.ImportDir(path, 0)
		if err != nil {
			if _, ok := err.(*build.NoGoError); ok {
				return nil
			}
			return err
		}
		rel, _ := filepath.Rel(root, path)
		p := "chord/" + filepath.ToSlash(rel)
		n++
		imps, ok := rule(p)
		if !ok {
			t.Errorf("%s is not in the list of allowed imports: add it where it belongs", p)
			return nil
		}
		for _, imp := range pkg.Imports {
			if !strings.HasPrefix(imp, "chord/") || strings.HasPrefix(imp, "chord/internal/") {
				continue
			}
			if strings.HasPrefix(p, "chord/internal/") || !slices.ContainsFunc(imps, func(pat string) bool { return match(pat, imp) }) {
				t.Errorf("%s imports %s: not an allowed arrow", p, imp)
			}
		}
		return nil
	})
	if err != nil {
		t.Fatal(err)
	}
	if n < 15 {
		t.Fatalf("only %d packages found under %s", n, root)
	}
}
