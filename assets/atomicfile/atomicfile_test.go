package atomicfile

import (
	"errors"
	"io"
	"os"
	"path/filepath"
	"testing"
)

func TestWriteReplacesWhole(t *testing.T) {
	dir := t.TempDir()
	p := filepath.Join(dir, "m.json")
	if err := WriteBytes(p, []byte("old"), 0o644); err != nil {
		t.Fatal(err)
	}
	if err := WriteBytes(p, []byte("new content"), 0o644); err != nil {
		t.Fatal(err)
	}
	b, _ := os.ReadFile(p)
	if string(b) != "new content" {
		t.Fatalf("got %q", b)
	}
	assertOnlyFile(t, dir, "m.json")
}

func TestFailedFillKeepsOld(t *testing.T) {
	dir := t.TempDir()
	p := filepath.Join(dir, "m.json")
	if err := WriteBytes(p, []byte("old"), 0o644); err != nil {
		t.Fatal(err)
	}
	boom := errors.New("disk full")
	err := Write(p, 0o644, func(w io.Writer) error {
		w.Write([]byte("partial"))
		return boom
	})
	if !errors.Is(err, boom) {
		t.Fatalf("error %v does not wrap the cause", err)
	}
	b, _ := os.ReadFile(p)
	if string(b) != "old" {
		t.Fatalf("old file changed: %q", b)
	}
	assertOnlyFile(t, dir, "m.json")
}

func TestMissingDirectoryNamesPath(t *testing.T) {
	p := filepath.Join(t.TempDir(), "no", "such", "x.png")
	err := WriteBytes(p, []byte("x"), 0o644)
	if err == nil {
		t.Fatal("expected an error")
	}
	if got := err.Error(); len(got) < len(p) || got[:len(p)] != p {
		t.Fatalf("error %q does not start with the path", got)
	}
}

func assertOnlyFile(t *testing.T, dir, name string) {
	t.Helper()
	ents, _ := os.ReadDir(dir)
	if len(ents) != 1 || ents[0].Name() != name {
		var names []string
		for _, e := range ents {
			names = append(names, e.Name())
		}
		t.Fatalf("directory holds %v, want only %s", names, name)
	}
}
