package main

import (
	"bufio"
	"bytes"
	"context"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"patina/assets/capture"
)

// badCase is one line of a testdata/bad/expect-*.tsv table: the file, its
// kind and a substring the check's output must contain (the place and
// what was expected).
type badCase struct {
	file, kind, want string
	line             int
	table            string
}

func readBadTables(t *testing.T) []badCase {
	t.Helper()
	tables, err := filepath.Glob(filepath.Join("..", "..", "testdata", "bad", "expect-*.tsv"))
	if err != nil || len(tables) == 0 {
		t.Fatalf("no expect-*.tsv tables: %v", err)
	}
	var cases []badCase
	for _, tab := range tables {
		f, err := os.Open(tab)
		if err != nil {
			t.Fatal(err)
		}
		sc := bufio.NewScanner(f)
		n := 0
		for sc.Scan() {
			n++
			line := sc.Text()
			if strings.TrimSpace(line) == "" || strings.HasPrefix(line, "#") {
				continue
			}
			parts := strings.SplitN(line, "\t", 3)
			if len(parts) != 3 || parts[2] == "" {
				t.Errorf("%s:%d: want FILE<TAB>KIND<TAB>EXPECTED, got %q", tab, n, line)
				continue
			}
			cases = append(cases, badCase{file: parts[0], kind: parts[1], want: parts[2], line: n, table: filepath.Base(tab)})
		}
		f.Close()
	}
	return cases
}

// wrapInCapture writes a copy of the jar-small fixture capture into a
// temporary directory with its mesh or its first photo replaced by the
// bad file.
func wrapInCapture(t *testing.T, c badCase, bad string) string {
	t.Helper()
	cp, err := capture.Load(filepath.Join("..", "..", "testdata", "jar-small", "capture.json"))
	if err != nil {
		t.Fatal(err)
	}
	abs, _ := filepath.Abs(bad)
	switch c.kind {
	case "mesh":
		cp.Mesh = filepath.ToSlash(abs)
	case "photo":
		cp.Photos[0].File = filepath.ToSlash(abs)
	}
	out := filepath.Join(t.TempDir(), "wrapped.json")
	if err := cp.Save(out); err != nil {
		t.Fatal(err)
	}
	return out
}

// TestBadInputs runs `patina check` on every file of testdata/bad listed
// in the expect-*.tsv tables, directly and (for meshes and photos) inside
// a capture: each must exit 2 with output naming the file and the place.
func TestBadInputs(t *testing.T) {
	cases := readBadTables(t)
	listed := map[string]bool{}
	for _, c := range cases {
		listed[c.file] = true
		path := filepath.Join("..", "..", "testdata", "bad", c.file)
		if _, err := os.Stat(path); err != nil {
			t.Errorf("%s:%d: %v", c.table, c.line, err)
			continue
		}
		targets := []string{path}
		if c.kind == "mesh" || c.kind == "photo" {
			targets = append(targets, wrapInCapture(t, c, path))
		}
		for i, target := range targets {
			var o, e bytes.Buffer
			code := run(context.Background(), []string{"check", target}, &o, &e)
			all := o.String() + e.String()
			how := "directly"
			if i == 1 {
				how = "inside a capture"
			}
			if code != 2 {
				t.Errorf("%s (%s): exit %d, want 2\n%s", c.file, how, code, all)
				continue
			}
			if !strings.Contains(all, c.file) {
				t.Errorf("%s (%s): output does not name the file:\n%s", c.file, how, all)
			}
			if !strings.Contains(all, c.want) {
				t.Errorf("%s (%s): output lacks %q:\n%s", c.file, how, c.want, all)
			}
		}
	}
	// Every file in testdata/bad is in a table, so none goes unchecked.
	entries, _ := os.ReadDir(filepath.Join("..", "..", "testdata", "bad"))
	for _, e := range entries {
		n := e.Name()
		if !strings.HasPrefix(n, "expect-") && !listed[n] && !e.IsDir() && n != "README.md" {
			t.Errorf("testdata/bad/%s is in no expect-*.tsv table", n)
		}
	}
	if len(cases) < 25 {
		t.Errorf("only %d bad-input cases", len(cases))
	}
}
