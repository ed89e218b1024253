package capture

import (
	"bytes"
	"encoding/json"
	"fmt"
	"path/filepath"
	"strconv"

	"patina/assets/atomicfile"
)

// The wire types fix the order and form of the fields Save writes.
type wireCapture struct {
	Version  int          `json:"patina_capture"`
	Name     string       `json:"name,omitempty"`
	Up       string       `json:"up"`
	Mesh     string       `json:"mesh"`
	Segments []Segment    `json:"segments,omitempty"`
	Cameras  []wireCamera `json:"cameras"`
	Lights   []wireLight  `json:"lights"`
	Photos   []wirePhoto  `json:"photos"`
}

type wireSegment struct {
	Name            string      `json:"name"`
	Label           *int        `json:"label,omitempty"`
	Model           string      `json:"model"`
	ReferenceAlbedo *[3]float64 `json:"reference_albedo,omitempty"`
}

// MarshalJSON writes a segment with its lower-case field names.
func (s Segment) MarshalJSON() ([]byte, error) {
	return json.Marshal(wireSegment(s))
}

type wireCamera struct {
	ID         string    `json:"id"`
	Width      int       `json:"width"`
	Height     int       `json:"height"`
	Fx         num       `json:"fx"`
	Fy         num       `json:"fy"`
	Cx         num       `json:"cx"`
	Cy         num       `json:"cy"`
	Distortion [5]num    `json:"distortion"`
	Position   [3]num    `json:"position"`
	Rotation   [3][3]num `json:"rotation"`
}

type wireLight struct {
	ID         string  `json:"id"`
	Type       string  `json:"type"`
	Position   *[3]num `json:"position,omitempty"`
	Intensity  *[3]num `json:"intensity,omitempty"`
	Direction  *[3]num `json:"direction,omitempty"`
	Irradiance *[3]num `json:"irradiance,omitempty"`
	Radius     *num    `json:"radius,omitempty"`
}

type wirePhoto struct {
	File       string   `json:"file"`
	Camera     string   `json:"camera"`
	Lights     []string `json:"lights"`
	Encoding   string   `json:"encoding"`
	BlackLevel num      `json:"black_level"`
	WhiteLevel num      `json:"white_level"`
	Exposure   Exposure `json:"exposure"`
	Use        string   `json:"use"`
	Mask       string   `json:"mask,omitempty"`
}

// num writes a float64 in the shortest form that reads back exactly.
type num float64

func (n num) MarshalJSON() ([]byte, error) {
	if n == 0 {
		return []byte("0"), nil // also for -0
	}
	return strconv.AppendFloat(nil, float64(n), 'g', -1, 64), nil
}

func nums3(v [3]float64) [3]num { return [3]num{num(v[0]), num(v[1]), num(v[2])} }

func nums3p(v [3]float64) *[3]num { n := nums3(v); return &n }

// MarshalJSON writes the exposure as a number, or as the camera settings
// object when it was given so.
func (e Exposure) MarshalJSON() ([]byte, error) {
	if e.IsSettings() {
		return json.Marshal(struct {
			ShutterS num `json:"shutter_s"`
			ISO      num `json:"iso"`
			FNumber  num `json:"f_number"`
		}{num(e.ShutterS), num(e.ISO), num(e.FNumber)})
	}
	return num(e.Scale).MarshalJSON()
}

// Marshal returns the capture as stable, indented JSON: fields in the
// format's order, numbers in the shortest form that reads back exactly.
func (c *Capture) Marshal() ([]byte, error) {
	w := wireCapture{Version: c.Version, Name: c.Name, Up: c.Up, Mesh: c.Mesh, Segments: c.Segments,
		Cameras: []wireCamera{}, Lights: []wireLight{}, Photos: []wirePhoto{}}
	if w.Up == "" {
		w.Up = "+z"
	}
	for _, cam := range c.Cameras {
		wc := wireCamera{ID: cam.ID, Width: cam.Width, Height: cam.Height,
			Fx: num(cam.Fx), Fy: num(cam.Fy), Cx: num(cam.Cx), Cy: num(cam.Cy),
			Position: nums3(cam.Position)}
		for i, d := range cam.Distortion {
			wc.Distortion[i] = num(d)
		}
		for i := range cam.Rotation {
			wc.Rotation[i] = nums3(cam.Rotation[i])
		}
		w.Cameras = append(w.Cameras, wc)
	}
	for _, l := range c.Lights {
		wl := wireLight{ID: l.ID, Type: l.Type}
		switch l.Type {
		case LightDirectional:
			wl.Direction, wl.Irradiance = nums3p(l.Direction), nums3p(l.Irradiance)
		case LightSphere:
			r := num(l.Radius)
			wl.Position, wl.Intensity, wl.Radius = nums3p(l.Position), nums3p(l.Intensity), &r
		default:
			wl.Position, wl.Intensity = nums3p(l.Position), nums3p(l.Intensity)
		}
		w.Lights = append(w.Lights, wl)
	}
	for _, p := range c.Photos {
		lights := p.Lights
		if lights == nil {
			lights = []string{}
		}
		w.Photos = append(w.Photos, wirePhoto{File: p.File, Camera: p.Camera, Lights: lights,
			Encoding: p.Encoding, BlackLevel: num(p.BlackLevel), WhiteLevel: num(p.WhiteLevel),
			Exposure: p.Exposure, Use: p.Use, Mask: p.Mask})
	}
	var buf bytes.Buffer
	enc := json.NewEncoder(&buf)
	enc.SetEscapeHTML(false)
	enc.SetIndent("", "  ")
	if err := enc.Encode(w); err != nil {
		return nil, err
	}
	return compactArrays(buf.Bytes()), nil
}

// compactArrays puts every array that holds only numbers and strings on
// one line, so a rotation reads as three rows, a position as one line and a
// photo's light list as one line.
func compactArrays(in []byte) []byte {
	var out bytes.Buffer
	for i := 0; i < len(in); {
		switch in[i] {
		case '"':
			j := stringEnd(in, i)
			out.Write(in[i:j])
			i = j
		case '[':
			if elems, j, ok := flatArray(in, i); ok {
				out.WriteByte('[')
				for k, e := range elems {
					if k > 0 {
						out.WriteString(", ")
					}
					out.Write(e)
				}
				out.WriteByte(']')
				i = j
				continue
			}
			out.WriteByte('[')
			i++
		default:
			out.WriteByte(in[i])
			i++
		}
	}
	return out.Bytes()
}

// stringEnd returns the offset just past the JSON string starting at in[i].
func stringEnd(in []byte, i int) int {
	j := i + 1
	for j < len(in) && in[j] != '"' {
		if in[j] == '\\' {
			j++
		}
		j++
	}
	return min(j+1, len(in))
}

// flatArray returns the elements of the array opening at in[i] when they
// are all scalars, and the offset just past its closing bracket.
func flatArray(in []byte, i int) ([][]byte, int, bool) {
	var elems [][]byte
	j := i + 1
	for j < len(in) {
		switch c := in[j]; c {
		case ' ', '\n', '\t', '\r', ',':
			j++
		case ']':
			return elems, j + 1, true
		case '[', '{':
			return nil, 0, false
		case '"':
			k := stringEnd(in, j)
			elems = append(elems, in[j:k])
			j = k
		default:
			k := j
			for k < len(in) && !bytes.ContainsRune([]byte(" \n\t\r,]"), rune(in[k])) {
				k++
			}
			elems = append(elems, in[j:k])
			j = k
		}
	}
	return nil, 0, false
}

// Save writes the capture to path atomically (through assets/atomicfile).
// When path is in another directory than the capture was loaded from, the
// relative file paths in it are rewritten to stay correct from the new
// place. On success c.Path and c.Dir name the new file.
func (c *Capture) Save(path string) error {
	abs, err := filepath.Abs(path)
	if err != nil {
		return err
	}
	newDir := filepath.Dir(abs)
	oldDir := c.Dir
	if oldDir != "" {
		if oldDir, err = filepath.Abs(oldDir); err != nil {
			return err
		}
	}
	out := *c
	if oldDir != "" && oldDir != newDir {
		rebase := func(p string) string {
			if p == "" || filepath.IsAbs(filepath.FromSlash(p)) {
				return p
			}
			old := filepath.Join(oldDir, filepath.FromSlash(p))
			r, err := filepath.Rel(newDir, old)
			if err != nil {
				return filepath.ToSlash(old)
			}
			return filepath.ToSlash(r)
		}
		out.Mesh = rebase(c.Mesh)
		out.Photos = append([]Photo(nil), c.Photos...)
		for i := range out.Photos {
			out.Photos[i].File = rebase(out.Photos[i].File)
			out.Photos[i].Mask = rebase(out.Photos[i].Mask)
		}
	}
	data, err := out.Marshal()
	if err != nil {
		return fmt.Errorf("%s: %w", path, err)
	}
	if err := atomicfile.WriteBytes(abs, data, 0o644); err != nil {
		return err
	}
	c.Mesh, c.Photos = out.Mesh, out.Photos
	c.Path, c.Dir = abs, newDir
	c.pos, c.lines = nil, nil
	return nil
}
