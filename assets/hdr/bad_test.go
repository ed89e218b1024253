package hdr

import (
	"bytes"
	"errors"
	"flag"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

var updateBad = flag.Bool("hdr.update-bad", false, "rewrite testdata/bad/hdr-* and testdata/bad/expect-hdr.tsv from badFiles")

const badDir = "../../testdata/bad"

// badFile is one malformed file of testdata/bad, with the exact place the
// error must name and the substring the CLI test looks for.
type badFile struct {
	name        string
	data        []byte
	unsupported bool  // an UnsupportedError rather than a FormatError
	line        int   // header line, 0 for none
	scanline    int   // -1 for none
	offset      int64 // -1 for none (always -1 for UnsupportedError)
	want        string
}

func badFiles(t *testing.T) []badFile {
	const hdr = stdHeader // 35 bytes
	res := func(w, h int) string { return fmt.Sprintf("-Y %d +X %d\n", h, w) }
	data16 := func() []byte { // a valid 16x4 run-length file
		var b bytes.Buffer
		if err := EncodeRGBE(&b, testImage(16, 4, 5)); err != nil {
			t.Fatal(err)
		}
		return b.Bytes()
	}()
	_, info16, err := DecodeRGBE(bytes.NewReader(data16))
	if err != nil {
		t.Fatal(err)
	}
	// Cut the valid file in the middle of scanline 2: find where it starts by
	// decoding two rows' worth.
	rows2 := func() int {
		for n := int(info16.DataOffset); n < len(data16); n++ {
			_, _, err := DecodeRGBE(bytes.NewReader(data16[:n]))
			var fe *FormatError
			if errors.As(err, &fe) && fe.Scanline == 2 {
				return n
			}
		}
		t.Fatal("no cut point")
		return 0
	}()
	truncated := data16[:rows2+20]
	h16 := len(hdr) + len(res(16, 2))
	rle16 := func(h int, body ...byte) []byte { return append([]byte(hdr+res(16, h)), body...) }
	pixel := []byte{128, 64, 32, 129}

	pfmRow := func(n int) []byte { return make([]byte, 4*n) }
	return []badFile{
		{"hdr-truncated-scanline.hdr", truncated, false, 0, 2, int64(len(truncated)),
			fmt.Sprintf("scanline 2, byte %d: pixel data ends in scanline 2 of 4", len(truncated))},
		{"hdr-rle-run-overrun.hdr", rle16(2, 2, 2, 0, 16, 128+20, 7), false, 0, 0, int64(h16 + 4),
			fmt.Sprintf("scanline 0, byte %d: red channel: run of 20 at x = 0 overruns the scanline width 16", h16+4)},
		{"hdr-rle-literal-overrun.hdr", rle16(2, append([]byte{2, 2, 0, 16, 10}, append(make([]byte, 10), 10, 1, 2, 3)...)...),
			false, 0, 0, int64(h16 + 4 + 11),
			fmt.Sprintf("scanline 0, byte %d: red channel: 10 literal bytes at x = 10 overrun the scanline width 16", h16+4+11)},
		{"hdr-rle-width-mismatch.hdr", rle16(2, 2, 2, 0, 17), false, 0, 0, int64(h16),
			"scanline 0, byte " + fmt.Sprint(h16) + ": run-length scanline header gives width 17, expected 16"},
		{"hdr-absurd-dimensions.hdr", []byte(hdr + res(200000, 100000)), true, 4, -1, -1,
			"header line 4: image size 200000x100000 (20000000000 pixels) exceeds the limit"},
		{"hdr-zero-width.hdr", []byte(hdr + res(0, 4)), false, 4, -1, int64(len(hdr)),
			"header line 4, byte 35: image size 0x4, expected a width and height of at least 1"},
		{"hdr-bad-orientation.hdr", []byte(hdr + "+Y 4 +X 4\n" + string(make([]byte, 64))), true, 4, -1, -1,
			"header line 4: orientation \"+Y 4 +X 4\" is not supported"},
		{"hdr-bad-resolution.hdr", []byte(hdr + "-Y 4 X 4\n"), false, 4, -1, int64(len(hdr)),
			"header line 4, byte 35: resolution line \"-Y 4 X 4\", expected \"-Y height +X width\""},
		{"hdr-missing-format.hdr", append([]byte("#?RADIANCE\nEXPOSURE=1\n\n-Y 1 +X 1\n"), pixel...), false, 3, -1, 22,
			"header line 3, byte 22: header has no FORMAT= line"},
		{"hdr-wrong-magic.hdr", append([]byte("#?RADIANCE-ISH\nFORMAT=32-bit_rle_rgbe\n\n-Y 1 +X 1\n"), pixel...), false, 1, -1, 0,
			"header line 1, byte 0: first line \"#?RADIANCE-ISH\", expected #?RADIANCE or #?RGBE"},
		{"hdr-xyze.hdr", append([]byte("#?RADIANCE\nFORMAT=32-bit_rle_xyze\n\n-Y 1 +X 1\n"), pixel...), true, 2, -1, -1,
			"header line 2: FORMAT=32-bit_rle_xyze (CIE XYZ pixels) is not supported"},
		{"hdr-bad-exposure.hdr", append([]byte("#?RADIANCE\nFORMAT=32-bit_rle_rgbe\nEXPOSURE=-2\n\n-Y 1 +X 1\n"), pixel...), false, 3, -1, 34,
			"header line 3, byte 34: EXPOSURE=-2, expected a positive finite number"},
		{"hdr-header-eof.hdr", []byte("#?RADIANCE\nFORMAT=32-bit_rle_rgbe\n"), false, 3, -1, 34,
			"header line 3, byte 34: input ends in the header"},
		{"hdr-old-run-first.hdr", append([]byte(hdr+res(4, 1)), 1, 1, 1, 4), false, 0, 0, int64(len(hdr) + len(res(4, 1))),
			"scanline 0, byte 45: old-style run (1, 1, 1, n) at the first pixel of the image"},
		{"hdr-old-run-overrun.hdr", append(append([]byte(hdr+res(4, 2)), pixel...), 1, 1, 1, 9), false, 0, 0, int64(len(hdr) + len(res(4, 2)) + 4),
			"scanline 0, byte 49: old-style run of 9 pixels at x = 1 overruns the scanline width 4"},
		{"hdr-short-data.pfm", append([]byte("PF\n4 3\n-1.0\n"), pfmRow(3*4*2+5)...), false, 0, 0, 12 + 4*29,
			"scanline 0, byte 128: pixel data ends in file row 2 of 3 (rows run bottom to top)"},
		{"hdr-nan-scale.pfm", append([]byte("PF\n2 2\nnan\n"), pfmRow(12)...), false, 3, -1, 7,
			"header line 3, byte 7: scale \"nan\", expected a finite non-zero number"},
		{"hdr-zero-scale.pfm", append([]byte("Pf\n2 2\n0.0\n"), pfmRow(4)...), false, 3, -1, 7,
			"header line 3, byte 7: scale \"0.0\", expected a finite non-zero number"},
		{"hdr-bad-magic.pfm", append([]byte("P6\n2 2\n255\n"), pfmRow(3)...), false, 1, -1, 0,
			"header line 1, byte 0: expected the magic PF (colour) or Pf (grey)"},
		{"hdr-bad-width.pfm", []byte("PF\n-3 2\n-1.0\n"), false, 2, -1, 3,
			"header line 2, byte 3: width \"-3\", expected a positive decimal integer"},
		{"hdr-absurd-dimensions.pfm", []byte("PF\n999999999 999999999\n-1.0\n"), true, 2, -1, -1,
			"header line 2: image size 999999999x999999999 (999999998000000001 pixels) exceeds the limit"},
	}
}

// TestBadFiles reads every malformed file in testdata/bad/hdr-* and checks
// the error type, the exact place (header line, scanline, byte offset), that
// the message names the file, and that it contains the substring listed in
// expect-hdr.tsv for the CLI test.
func TestBadFiles(t *testing.T) {
	files := badFiles(t)
	var tsv strings.Builder
	for _, f := range files {
		fmt.Fprintf(&tsv, "%s\thdr\t%s\n", f.name, f.want)
	}
	if *updateBad {
		for _, f := range files {
			if err := os.WriteFile(filepath.Join(badDir, f.name), f.data, 0o644); err != nil {
				t.Fatal(err)
			}
		}
		if err := os.WriteFile(filepath.Join(badDir, "expect-hdr.tsv"), []byte(tsv.String()), 0o644); err != nil {
			t.Fatal(err)
		}
	}
	manifest, err := os.ReadFile(filepath.Join(badDir, "expect-hdr.tsv"))
	if err != nil {
		t.Fatal(err)
	}
	if string(manifest) != tsv.String() {
		t.Errorf("expect-hdr.tsv is out of date: run go test -run TestBadFiles ./assets/hdr/ -args -hdr.update-bad")
	}
	onDisk, _ := filepath.Glob(filepath.Join(badDir, "hdr-*"))
	if len(onDisk) != len(files) {
		t.Errorf("%d hdr-* files in testdata/bad, %d in the table", len(onDisk), len(files))
	}
	for _, f := range files {
		path := filepath.Join(badDir, f.name)
		data, err := os.ReadFile(path)
		if err != nil {
			t.Fatal(err)
		}
		if !bytes.Equal(data, f.data) {
			t.Errorf("%s differs from its definition in badFiles: rerun with -hdr.update-bad", f.name)
		}
		_, err = ReadFile(path)
		if err == nil {
			t.Errorf("%s: no error", f.name)
			continue
		}
		msg := err.Error()
		if !strings.HasPrefix(msg, path+": ") || !strings.Contains(msg, f.want) {
			t.Errorf("%s: error %q\nwant the file name and %q", f.name, msg, f.want)
		}
		var fe *FormatError
		var ue *UnsupportedError
		switch {
		case f.unsupported && errors.As(err, &ue):
			if ue.Line != f.line {
				t.Errorf("%s: line %d, want %d", f.name, ue.Line, f.line)
			}
		case !f.unsupported && errors.As(err, &fe):
			if fe.Line != f.line || fe.Scanline != f.scanline || fe.Offset != f.offset {
				t.Errorf("%s: place line %d scanline %d byte %d, want line %d scanline %d byte %d",
					f.name, fe.Line, fe.Scanline, fe.Offset, f.line, f.scanline, f.offset)
			}
		default:
			t.Errorf("%s: error type %T (%v), want unsupported=%v", f.name, errors.Unwrap(err), err, f.unsupported)
		}
	}
}
