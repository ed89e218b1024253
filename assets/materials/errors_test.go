package materials

import (
	"errors"
	"strconv"
	"strings"
	"testing"

	"patina/assets/capture"
	"patina/assets/mesh"
)

// TestParseTruncatedGivesPlace cuts a materials file short at several
// places and checks that the error names the file and the line and column
// of the end of the data, where the JSON stops being complete. The
// expected positions are counted by hand from the text (line 1 is the
// first line, column 1 its first character).
func TestParseTruncatedGivesPlace(t *testing.T) {
	text := "{\"patina_materials\": 1, \"capture\": \"c.json\", \"segments\": [\n" +
		" {\"name\": \"glaze\", \"model\": \"dielectric\", \"roughness\": 0.25}\n" +
		"]}\n"
	cases := []struct {
		n         int // bytes kept
		line, col int
	}{
		{1, 1, 2},                             // "{"
		{12, 1, 13},                           // inside the key "patina_materials"
		{strings.Index(text, "\n") + 1, 2, 1}, // the first line whole
		{strings.Index(text, "glaze") + 3, 2, 15}, // inside the string "glaze"
		{len(text) - 2, 3, 2},                     // "]" without the closing "}"
	}
	for _, c := range cases {
		_, err := Parse([]byte(text[:c.n]), "cut.json")
		var me *Error
		if !errors.As(err, &me) {
			t.Fatalf("%d bytes: %v, expected *Error", c.n, err)
		}
		want := "line " + strconv.Itoa(c.line) + ", column " + strconv.Itoa(c.col) + ": "
		if !strings.Contains(err.Error(), "cut.json") || !strings.Contains(err.Error(), want) {
			t.Errorf("%d bytes (%q): %v, expected the file and %q", c.n, text[:c.n], err, want)
		}
	}
	// Nothing but space: placed at the end, and says it is empty.
	if _, err := Parse([]byte("\n\n"), "blank.json"); err == nil || !strings.Contains(err.Error(), "line 3, column 1") || !strings.Contains(err.Error(), "empty") {
		t.Errorf("blank file: %v", err)
	}
	// Data after the object: the place of that data.
	if _, err := Parse([]byte("{\"patina_materials\": 1, \"segments\": []}\n  x"), "tail.json"); err == nil || !strings.Contains(err.Error(), "line 2, column 3") {
		t.Errorf("trailing data: %v", err)
	}
}

// TestValidateReturnsTypedErrors checks that every problem Validate finds
// is a separate *Error with its own JSON path, as its documentation says,
// so that callers (patina check) can list them without parsing text.
func TestValidateReturnsTypedErrors(t *testing.T) {
	c, err := capture.Load(fixture)
	if err != nil {
		t.Fatal(err)
	}
	m, _, err := mesh.Load(c.Resolve(c.Mesh))
	if err != nil {
		t.Fatal(err)
	}
	f, err := Parse([]byte(good), "m.json")
	if err != nil {
		t.Fatal(err)
	}
	f.Segments[0].Name = "glazed"
	f.Segments[1].Model = "dielectric"
	err = f.Validate(c, m)
	j, ok := err.(interface{ Unwrap() []error })
	if !ok {
		t.Fatalf("Validate returned %T (%v), expected a joined list", err, err)
	}
	var paths []string
	for _, e := range j.Unwrap() {
		me, ok := e.(*Error)
		if !ok {
			t.Fatalf("problem %T (%v), expected *Error", e, e)
		}
		if me.File != "m.json" {
			t.Errorf("problem %v names file %q", me, me.File)
		}
		paths = append(paths, me.Path)
	}
	if got, want := strings.Join(paths, " "), "segments[0].name segments[1].model segments[1] segments"; got != want {
		t.Errorf("problem paths %q, want %q", got, want)
	}
}
