package main

import (
	"bytes"
	"os"
	"path/filepath"
	"regexp"
	"slices"
	"sort"
	"strings"
	"testing"

	"github.com/urfave/cli/v2"

	"chord/internal/testenv"
)

// commandHelp returns the output of chord PATH --help.
func commandHelp(t *testing.T, path string) string {
	t.Helper()
	app := newApp()
	var out bytes.Buffer
	app.Writer, app.ErrWriter = &out, &out
	if err := runApp(app, append(append([]string{"chord"}, strings.Fields(path)...), "--help")); err != nil {
		t.Fatalf("chord %s --help: %v", path, err)
	}
	return out.String()
}

// Every command's help shows each flag's default once, and no default of
// "not given" (a zero value, a switch's false).
func TestHelpShowsEachDefaultOnce(t *testing.T) {
	paths := []string{""}
	forEachCommand(newApp().Commands, func(_ *cli.Command, path string) { paths = append(paths, path) })
	for _, path := range paths {
		for _, line := range strings.Split(commandHelp(t, path), "\n") {
			if strings.Count(line, "(default:") > 1 {
				t.Errorf("chord %s --help: a doubled default: %s", path, strings.TrimSpace(line))
			}
			for _, zero := range []string{"(default: false)", "(default: 0)", "(default: 0s)", `(default: "")`} {
				if strings.Contains(line, zero) {
					t.Errorf("chord %s --help: %s for an option not given: %s", path, zero, strings.TrimSpace(line))
				}
			}
		}
	}
	// The check itself fails where it must.
	f := &cli.IntFlag{Name: "workers", Usage: "`N` goroutines (default: one per core)"}
	if h := flagHelp(f); strings.Count(h, "(default:") != 1 || strings.Contains(h, "(default: 0)") {
		// the usage's own default is kept; no second one from the zero value
		t.Errorf("flagHelp = %q", h)
	}
	if h := flagHelp(&cli.IntFlag{Name: "jobs", Value: 1, Usage: "`N` at once"}); !strings.HasSuffix(h, "(default: 1)") {
		t.Errorf("flagHelp of a non-zero default = %q", h)
	}
	if h := flagHelp(&cli.BoolFlag{Name: "force", Usage: "replace"}); strings.Contains(h, "default") {
		t.Errorf("flagHelp of a switch = %q", h)
	}
}

// docSections returns the flags (--name) each "## chord CMD" section of
// docs/cli.md mentions, by section title ("grid", "opacity build").
func docSections(text string) map[string][]string {
	flagRE := regexp.MustCompile(`(^|[^A-Za-z0-9-])--([a-z][a-z0-9-]*)`)
	out := map[string][]string{}
	section := ""
	for _, line := range strings.Split(text, "\n") {
		if strings.HasPrefix(line, "## ") {
			section = ""
			if s, ok := strings.CutPrefix(line, "## chord "); ok {
				section = s
				if out[section] == nil {
					out[section] = []string{}
				}
			}
			continue
		}
		if section == "" {
			continue
		}
		for _, m := range flagRE.FindAllStringSubmatch(line, -1) {
			if !slices.Contains(out[section], m[2]) {
				out[section] = append(out[section], m[2])
			}
		}
	}
	return out
}

// otherPrograms' flags that docs/cli.md names (Slurm's sbatch and
// squeue, in the notes on clusters), which chord does not take.
var otherPrograms = []string{"signal", "parsable", "array"}

// Every flag chord accepts is documented in the section of its command in
// docs/cli.md (the section of a command with subcommands covers them),
// and every flag a section documents is accepted by its command or a
// subcommand of it, or is the old name of a renamed flag (the table of
// renamed flags).
func TestFlagsDocumented(t *testing.T) {
	text, err := os.ReadFile(filepath.Join(testenv.RepoRoot(t), "docs", "cli.md"))
	if err != nil {
		t.Fatal(err)
	}
	sections := docSections(string(text))
	accepted := map[string][]string{} // by section
	forEachCommand(newApp().Commands, func(c *cli.Command, path string) {
		if len(c.Subcommands) > 0 && len(c.Flags) == 0 {
			return // chord opacity: its subcommands have the sections
		}
		sec := path
		if _, ok := sections[sec]; !ok {
			sec = strings.Fields(path)[0] // a subcommand in its command's section
		}
		if _, ok := sections[sec]; !ok {
			t.Errorf("chord %s: no section \"## chord %s\" in docs/cli.md", path, path)
			return
		}
		for _, f := range c.Flags {
			name := f.Names()[0]
			accepted[sec] = append(accepted[sec], name)
			if !slices.Contains(sections[sec], name) {
				t.Errorf("chord %s --%s: accepted but not documented in \"## chord %s\" of docs/cli.md", path, name, sec)
			}
		}
	})
	n := 0
	for sec, flags := range sections {
		for _, name := range flags {
			n++
			old := slices.ContainsFunc(renamedFlags, func(r renamedFlag) bool { return r.old == name })
			if !slices.Contains(accepted[sec], name) && name != "help" && !old && !slices.Contains(otherPrograms, name) {
				t.Errorf("docs/cli.md \"## chord %s\": --%s is documented but chord %s does not accept it", sec, name, sec)
			}
		}
	}
	if n < 80 {
		t.Errorf("found %d documented flags; docs/cli.md has more (is the extraction broken?)", n)
	}
	// The extraction finds flags in text, tables and code, per section.
	got := docSections("## chord a\n`--x N`, text --y-z.\n| `-o, --out` |\n## Other\n--w\n## chord b c\nchord b c --v=1\n")
	keys := make([]string, 0, len(got))
	for k, v := range got {
		keys = append(keys, k+":"+strings.Join(v, ","))
	}
	sort.Strings(keys)
	if want := "a:x,y-z,out b c:v"; strings.Join(keys, " ") != want {
		t.Errorf("docSections: %q, want %q", strings.Join(keys, " "), want)
	}
}
