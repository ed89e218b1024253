package mesh

import (
	"bufio"
	"errors"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

const badDir = "../../testdata/bad"

// badPlaces is the exact place each malformed file must be reported at:
// Line, Record, Offset and Element of the *FormatError (see its doc).
var badPlaces = map[string]FormatError{
	"mesh-4e9-vertices.ply":              {Line: 3, Record: -1, Offset: -1, Element: "header"},
	"mesh-bad-format.ply":                {Line: 2, Record: -1, Offset: -1, Element: "header"},
	"mesh-bad-type.ply":                  {Line: 5, Record: -1, Offset: -1, Element: "header"},
	"mesh-binary-garbage.obj":            {Line: 2, Record: -1, Offset: -1, Element: ""},
	"mesh-header-claims-more.ply":        {Line: 3, Record: -1, Offset: -1, Element: "header"},
	"mesh-index-out-of-range-binary.ply": {Line: 0, Record: 1, Offset: 230, Element: "face"},
	"mesh-index-out-of-range.obj":        {Line: 6, Record: -1, Offset: -1, Element: "f"},
	"mesh-index-out-of-range.ply":        {Line: 21, Record: 3, Offset: -1, Element: "face"},
	"mesh-index-zero.obj":                {Line: 4, Record: -1, Offset: -1, Element: "f"},
	"mesh-inf-vertex-binary.ply":         {Line: 0, Record: 1, Offset: 178, Element: "vertex"},
	"mesh-list-count-huge.ply":           {Line: 0, Record: 1, Offset: 232, Element: "face"},
	"mesh-nan-vertex.obj":                {Line: 3, Record: -1, Offset: -1, Element: "v"},
	"mesh-nan-vertex.ply":                {Line: 12, Record: 2, Offset: -1, Element: "vertex"},
	"mesh-no-end-header.ply":             {Line: 5, Record: -1, Offset: -1, Element: "header"},
	"mesh-no-faces.obj":                  {Line: 0, Record: -1, Offset: -1, Element: ""},
	"mesh-no-vertex-element.ply":         {Line: 5, Record: -1, Offset: -1, Element: "header"},
	"mesh-not-a-number.ply":              {Line: 11, Record: 1, Offset: -1, Element: "vertex"},
	"mesh-not-ply.ply":                   {Line: 1, Record: -1, Offset: -1, Element: "header"},
	"mesh-not-utf8.obj":                  {Line: 4, Record: -1, Offset: -1, Element: "usemtl"},
	"mesh-skip-list-huge.ply":            {Line: 0, Record: 0, Offset: 292, Element: "material"},
	"mesh-truncated-binary.ply":          {Line: 0, Record: 1, Offset: 230, Element: "face"},
	"mesh-two-vertex-face.obj":           {Line: 5, Record: -1, Offset: -1, Element: "f"},
	"mesh-two-vertex-face.ply":           {Line: 15, Record: 1, Offset: -1, Element: "face"},
	"mesh-wrong-face-count.ply":          {Line: 16, Record: 2, Offset: -1, Element: "face"},
	"mesh-wrong-vertex-count.ply":        {Line: 14, Record: 4, Offset: -1, Element: "vertex"},
}

// TestBadFiles loads every testdata/bad/mesh-* file and checks the error's
// type, place and the message substring that testdata/bad/expect-mesh.tsv
// promises to the CLI test.
func TestBadFiles(t *testing.T) {
	f, err := os.Open(filepath.Join(badDir, "expect-mesh.tsv"))
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	expect := map[string]string{}
	sc := bufio.NewScanner(f)
	for sc.Scan() {
		cols := strings.Split(sc.Text(), "\t")
		if len(cols) != 3 || cols[1] != "mesh" {
			t.Fatalf("expect-mesh.tsv: bad line %q", sc.Text())
		}
		expect[cols[0]] = cols[2]
	}
	files, _ := filepath.Glob(filepath.Join(badDir, "mesh-*"))
	if len(files) < 12 {
		t.Fatalf("only %d bad mesh files", len(files))
	}
	for _, path := range files {
		base := filepath.Base(path)
		t.Run(base, func(t *testing.T) {
			want, ok := expect[base]
			if !ok {
				t.Fatalf("%s has no line in expect-mesh.tsv", base)
			}
			place, ok := badPlaces[base]
			if !ok {
				t.Fatalf("%s has no place in badPlaces", base)
			}
			_, _, err := Load(path)
			if err == nil {
				t.Fatal("loaded without error")
			}
			if !strings.Contains(err.Error(), path) || !strings.Contains(err.Error(), want) {
				t.Errorf("error %q\nwant the file name and %q", err, want)
			}
			var fe *FormatError
			if !errors.As(err, &fe) {
				t.Fatalf("%T is not a *FormatError", err)
			}
			if fe.Line != place.Line || fe.Record != place.Record || fe.Offset != place.Offset || fe.Element != place.Element {
				t.Errorf("place line %d record %d offset %d element %q, want line %d record %d offset %d element %q",
					fe.Line, fe.Record, fe.Offset, fe.Element, place.Line, place.Record, place.Offset, place.Element)
			}
		})
	}
	for name := range expect {
		if _, err := os.Stat(filepath.Join(badDir, name)); err != nil {
			t.Errorf("expect-mesh.tsv names %s: %v", name, err)
		}
	}
}

// The same files fed through ReadPLY/ReadOBJ on a plain stream (length
// unknown) must fail too, without the size check's help.
func TestBadFilesOnStreams(t *testing.T) {
	files, _ := filepath.Glob(filepath.Join(badDir, "mesh-*"))
	for _, path := range files {
		data, err := os.ReadFile(path)
		if err != nil {
			t.Fatal(err)
		}
		r := strings.NewReader(string(data))
		stream := bufio.NewReader(r) // hides Len
		if strings.HasSuffix(path, ".ply") {
			_, _, err = ReadPLY(stream, path)
		} else {
			_, _, err = ReadOBJ(stream, path)
		}
		var fe *FormatError
		if !errors.As(err, &fe) {
			t.Errorf("%s on a stream: %v (%T), want a *FormatError", filepath.Base(path), err, err)
		}
	}
}
