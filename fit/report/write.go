package report

import (
	"bytes"
	"encoding/json"
	"fmt"
	"path/filepath"
	"strings"

	"patina/assets/atomicfile"
)

// Written names the files WriteFiles wrote, with their SHA-256 (hex).
type Written struct {
	HTML, JSON, Sums             string
	HTMLSHA256, JSONSHA256       string
	HTMLBytes, JSONBytes, Images int
}

// Companions returns the paths of report.json and report.sha256 beside an
// HTML path: the same name with the extension replaced.
func Companions(htmlPath string) (jsonPath, sumsPath string) {
	base := strings.TrimSuffix(htmlPath, filepath.Ext(htmlPath))
	return base + ".json", base + ".sha256"
}

// WriteFiles writes the HTML page to htmlPath, then the JSON record beside
// it (Companions), which holds the page's SHA-256, then a checksum file in
// the format of sha256sum (GNU coreutils) listing both, so that
// `sha256sum -c report.sha256` in their directory verifies them. A file
// cannot hold its own hash, so the page lists the hashes of every input and
// of every picture it embeds, and names the checksum file for its own.
// Every file is written atomically (assets/atomicfile).
func (r *Report) WriteFiles(htmlPath string) (*Written, error) {
	jsonPath, sumsPath := Companions(htmlPath)
	if filepath.Clean(jsonPath) == filepath.Clean(htmlPath) {
		return nil, fmt.Errorf("report: %s: the page needs a name with an extension other than .json (like report.html)", htmlPath)
	}
	page, err := r.HTML(filepath.Base(jsonPath), filepath.Base(sumsPath))
	if err != nil {
		return nil, err
	}
	if err := atomicfile.WriteBytes(htmlPath, page, 0o644); err != nil {
		return nil, err
	}
	w := &Written{HTML: htmlPath, JSON: jsonPath, Sums: sumsPath, HTMLSHA256: sha256Hex(page), HTMLBytes: len(page), Images: len(r.Images)}
	r.Outputs = []FileRecord{{Role: "report page (HTML)", Path: absPath(htmlPath), Bytes: int64(len(page)), SHA256: w.HTMLSHA256}}
	js, err := r.JSON()
	if err != nil {
		return nil, err
	}
	if err := atomicfile.WriteBytes(jsonPath, js, 0o644); err != nil {
		return nil, err
	}
	w.JSONSHA256, w.JSONBytes = sha256Hex(js), len(js)
	// Names relative to the checksum file's directory, as sha256sum -c
	// expects when run there.
	sums := fmt.Sprintf("%s  %s\n%s  %s\n", w.HTMLSHA256, filepath.Base(htmlPath), w.JSONSHA256, filepath.Base(jsonPath))
	if filepath.Dir(filepath.Clean(sumsPath)) != filepath.Dir(filepath.Clean(htmlPath)) {
		return nil, fmt.Errorf("report: internal: checksum file in another directory")
	}
	if err := atomicfile.WriteBytes(sumsPath, []byte(sums), 0o644); err != nil {
		return nil, err
	}
	return w, nil
}

// JSON returns report.json's bytes: indented, with a trailing newline.
func (r *Report) JSON() ([]byte, error) {
	var b bytes.Buffer
	enc := json.NewEncoder(&b)
	enc.SetIndent("", "  ")
	enc.SetEscapeHTML(false)
	if err := enc.Encode(r); err != nil {
		return nil, fmt.Errorf("report: encoding the JSON record: %w", err)
	}
	return b.Bytes(), nil
}
