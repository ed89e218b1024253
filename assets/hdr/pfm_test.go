package hdr

import (
	"bytes"
	"encoding/binary"
	"math"
	"testing"
)

// TestPFMHandBuilt decodes files assembled byte by byte from the PFM
// description (Debevec's page, and the ARCHITECTURE/REFERENCES notes):
// "PF" or "Pf", width and height, a scale whose sign gives the byte order
// (negative: little-endian), then rows from the BOTTOM of the image up.
func TestPFMHandBuilt(t *testing.T) {
	le := func(v ...float32) []byte {
		var b []byte
		for _, f := range v {
			b = binary.LittleEndian.AppendUint32(b, math.Float32bits(f))
		}
		return b
	}
	be := func(v ...float32) []byte {
		var b []byte
		for _, f := range v {
			b = binary.BigEndian.AppendUint32(b, math.Float32bits(f))
		}
		return b
	}
	// 2x2 colour: file row 0 is the bottom row of the image.
	bottom := []float32{1, 2, 3, 4, 5, 6}
	top := []float32{-7, 8.5, 1e30, 0, 0.25, 9}
	for _, c := range []struct {
		name string
		data []byte
	}{
		{"little-endian", append([]byte("PF\n2 2\n-1.0\n"), le(append(append([]float32{}, bottom...), top...)...)...)},
		{"big-endian", append([]byte("PF\n2 2\n1.0\n"), be(append(append([]float32{}, bottom...), top...)...)...)},
		{"spaces and scale magnitude", append([]byte("PF 2\t2\r\n-4.0 "), le(append(append([]float32{}, bottom...), top...)...)...)},
	} {
		m, info, err := DecodePFMInfo(bytes.NewReader(c.data))
		if err != nil {
			t.Fatalf("%s: %v", c.name, err)
		}
		want := append(append([]float32{}, top...), bottom...)
		for i, v := range want {
			if m.Pix[i] != v {
				t.Fatalf("%s: Pix[%d] = %v, want %v", c.name, i, m.Pix[i], v)
			}
		}
		if info.Channels != 3 || info.LittleEndian != (info.Scale < 0) {
			t.Errorf("%s: info %+v", c.name, info)
		}
	}
	// Grey: 3x1, big-endian, expands to three equal channels.
	m, info, err := DecodePFMInfo(bytes.NewReader(append([]byte("Pf\n3 1\n1\n"), be(0.5, -2, 7)...)))
	if err != nil || info.Channels != 1 {
		t.Fatal(err, info)
	}
	for x, v := range []float32{0.5, -2, 7} {
		if r, g, b := m.RGB(x, 0); r != v || g != v || b != v {
			t.Errorf("grey x = %d: %v %v %v", x, r, g, b)
		}
	}
	// NaN samples are stored as they are.
	m, err = DecodePFM(bytes.NewReader(append([]byte("Pf\n1 1\n-1\n"), le(float32(math.NaN()))...)))
	if err != nil || !math.IsNaN(float64(m.Pix[0])) || m.CheckFinite() == nil {
		t.Errorf("NaN sample: %v", err)
	}
}

// TestPFMRoundTrip writes and reads back colour and grey, both byte orders:
// PFM stores float32 exactly, so the values must come back bit for bit.
func TestPFMRoundTrip(t *testing.T) {
	m := testImage(9, 4, 3)
	m.Pix[5] = float32(math.Inf(1))
	m.Pix[6] = -0.0
	for _, opt := range []PFMOptions{{}, {BigEndian: true}} {
		var buf bytes.Buffer
		if err := EncodePFMWith(&buf, m, opt); err != nil {
			t.Fatal(err)
		}
		got, info, err := DecodePFMInfo(&buf)
		if err != nil {
			t.Fatal(err)
		}
		if info.LittleEndian == opt.BigEndian || got.Width != 9 || got.Height != 4 {
			t.Fatalf("%+v: info %+v", opt, info)
		}
		for i := range m.Pix {
			if math.Float32bits(got.Pix[i]) != math.Float32bits(m.Pix[i]) {
				t.Fatalf("%+v: Pix[%d] = %v, want %v", opt, i, got.Pix[i], m.Pix[i])
			}
		}
	}
	// Grey: equal channels come back exactly; others as Rec. 709 luminance
	// (coefficients 0.2126, 0.7152, 0.0722 from ITU-R BT.709 / IEC 61966-2-1).
	g := NewImage(2, 1)
	g.SetRGB(0, 0, 0.3, 0.3, 0.3)
	g.SetRGB(1, 0, 1, 0, 0)
	var buf bytes.Buffer
	if err := EncodePFMGrey(&buf, g); err != nil {
		t.Fatal(err)
	}
	if !bytes.HasPrefix(buf.Bytes(), []byte("Pf\n2 1\n-1.0\n")) {
		t.Fatalf("grey header %q", buf.Bytes()[:12])
	}
	got, err := DecodePFM(&buf)
	if err != nil {
		t.Fatal(err)
	}
	if r, _, _ := got.RGB(0, 0); r != 0.3 {
		t.Errorf("equal channels: %v", r)
	}
	if r, _, _ := got.RGB(1, 0); math.Abs(float64(r)-0.2126) > 1e-4 {
		t.Errorf("red luminance %v, want 0.2126", r)
	}
}
