package main

import (
	"bytes"
	"flag"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/urfave/cli/v2"

	"chord/internal/testenv"
)

// Every chord command shown in a code block of the README and docs/ must
// parse: its subcommands exist, each flag is one the command takes, with a
// value of the flag's type, and `chord ... --help` lists the flag.
func TestDocumentedCommandsParse(t *testing.T) {
	root := testenv.RepoRoot(t)
	files, _ := filepath.Glob(filepath.Join(root, "docs", "*.md"))
	files = append([]string{filepath.Join(root, "README.md")}, files...)
	n := 0
	for _, f := range files {
		text, err := os.ReadFile(f)
		if err != nil {
			t.Fatal(err)
		}
		for _, c := range documentedCommands(string(text)) {
			n++
			old, err := checkCommand(c.args)
			switch {
			case err != nil:
				t.Errorf("%s:%d: %s\n\t%v", filepath.Base(f), c.line, strings.Join(c.args, " "), err)
			case old != "" && filepath.Base(f) == "README.md":
				// The README is not this package's to edit (it is being
				// restructured); its old spellings still work.
				t.Logf("%s:%d: %s: %s", filepath.Base(f), c.line, strings.Join(c.args, " "), old)
			case old != "":
				t.Errorf("%s:%d: %s: an old spelling: %s", filepath.Base(f), c.line, strings.Join(c.args, " "), old)
			}
		}
	}
	t.Logf("%d documented commands checked", n)
	if n < 30 {
		t.Errorf("found %d documented commands; the manual shows more (is the extraction broken?)", n)
	}
}

type docCommand struct {
	line int
	args []string // after "chord"
}

// documentedCommands returns the chord command lines of the fenced code
// blocks of a Markdown text (not those marked text, which show output):
// lines starting "chord " or "go run ./cmd/chord ", joined over trailing
// backslashes, without "# comments".
func documentedCommands(text string) []docCommand {
	var out []docCommand
	lines := strings.Split(text, "\n")
	inBlock, output := false, false
	for i := 0; i < len(lines); i++ {
		l := strings.TrimSpace(lines[i])
		if strings.HasPrefix(l, "```") {
			inBlock = !inBlock
			output = inBlock && strings.TrimPrefix(l, "```") == "text" // a block of output, not commands
			continue
		}
		if !inBlock || output {
			continue
		}
		start := i + 1
		for strings.HasSuffix(l, "\\") && i+1 < len(lines) {
			i++
			l = strings.TrimSuffix(l, "\\") + " " + strings.TrimSpace(lines[i])
		}
		var rest string
		switch {
		case strings.HasPrefix(l, "chord "):
			rest = l[len("chord "):]
		case strings.HasPrefix(l, "go run ./cmd/chord "):
			rest = l[len("go run ./cmd/chord "):]
		default:
			continue
		}
		if k := strings.Index(rest, " #"); k >= 0 {
			rest = rest[:k]
		}
		rest, _, _ = strings.Cut(rest, " > ") // a redirection
		out = append(out, docCommand{line: start, args: shellWords(rest)})
	}
	return out
}

// shellWords splits a command line at blanks, keeping quoted words whole.
func shellWords(s string) []string {
	var words []string
	var cur strings.Builder
	var quote rune
	in := false
	for _, r := range s {
		switch {
		case quote != 0 && r == quote:
			quote = 0
		case quote != 0:
			cur.WriteRune(r)
		case r == '"' || r == '\'':
			quote, in = r, true
		case r == ' ' || r == '\t':
			if in {
				words = append(words, cur.String())
				cur.Reset()
				in = false
			}
		default:
			cur.WriteRune(r)
			in = true
		}
	}
	if in {
		words = append(words, cur.String())
	}
	return words
}

// checkCommand finds the (sub)command of args in chord's command tree and
// parses its flags as urfave/cli does after normalizeArgs (positional
// arguments anywhere); old is the warning of a renamed flag, if any.
func checkCommand(args []string) (old string, err error) {
	app := newApp()
	var warn bytes.Buffer
	args = normalizeArgs(app, append([]string{"chord"}, args...), &warn)[1:]
	old = strings.TrimSpace(warn.String())
	cmds := app.Commands
	var cmd *cli.Command
	path := []string{}
	for len(args) > 0 {
		var next *cli.Command
		for _, c := range cmds {
			if c.HasName(args[0]) {
				next = c
			}
		}
		if next == nil {
			break
		}
		cmd, cmds, args = next, next.Subcommands, args[1:]
		path = append(path, next.Name)
	}
	if cmd == nil {
		return old, errorf("no command %q", args)
	}
	fs := flag.NewFlagSet(strings.Join(path, " "), flag.ContinueOnError)
	fs.SetOutput(io.Discard)
	for _, f := range cmd.Flags {
		if err := f.Apply(fs); err != nil {
			return old, err
		}
	}
	var used []string
	for len(args) > 0 {
		if err := fs.Parse(args); err != nil {
			return old, err
		}
		args = fs.Args()
		for len(args) > 0 && (!strings.HasPrefix(args[0], "-") || args[0] == "-") {
			args = args[1:] // a positional argument
		}
	}
	fs.Visit(func(f *flag.Flag) { used = append(used, f.Name) })
	// The help of the command lists every flag used.
	var help bytes.Buffer
	app = newApp()
	app.Writer, app.ErrWriter = &help, &help
	if err := app.Run(append(append([]string{"chord"}, path...), "--help")); err != nil {
		return old, errorf("chord %s --help: %v", strings.Join(path, " "), err)
	}
	for _, u := range used {
		if !strings.Contains(help.String(), "-"+u) {
			return old, errorf("chord %s --help does not list --%s", strings.Join(path, " "), u)
		}
	}
	return old, nil
}

func errorf(format string, a ...any) error { return fmt.Errorf(format, a...) }

// The check itself rejects what it must (so that the test above can fail).
func TestCheckCommandRejects(t *testing.T) {
	for _, bad := range []string{"frobnicate", "fit -c a.toml --no-such-flag", "fit -c a.toml --steps many", "grid status DIR --jobs", "report RUN --thin x"} {
		if _, err := checkCommand(shellWords(bad)); err == nil {
			t.Errorf("chord %s: accepted", bad)
		}
	}
	for _, good := range []string{"report RUN --burn auto --html", "grid run-point GRIDDIR 3 --workers 2", `opacity build -o t/ --partition "1/1=q1.txt"`, "demo"} {
		if _, err := checkCommand(shellWords(good)); err != nil {
			t.Errorf("chord %s: %v", good, err)
		}
	}
	got := documentedCommands("text\n```sh\nchord fit -c x.toml \\\n    -o run   # a comment\nls\n```\nchord outside a block\n```text\nchord 0.1.0-dev, run 12\n```\n")
	if len(got) != 1 || strings.Join(got[0].args, " ") != "fit -c x.toml -o run" || got[0].line != 3 {
		t.Errorf("extracted %+v", got)
	}
}
