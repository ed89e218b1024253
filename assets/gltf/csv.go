package gltf

import (
	"encoding/csv"
	"io"
	"strconv"

	"patina/assets/materials"
)

// WriteCSV writes the materials as a plain table for spreadsheets: one row
// per segment with the model, the parameters and their standard deviations
// (empty where the fit gave none).
func WriteCSV(w io.Writer, segs []materials.Segment) error {
	cw := csv.NewWriter(w)
	head := []string{"segment", "model",
		"diffuse_r", "diffuse_g", "diffuse_b", "specular_r", "specular_g", "specular_b", "roughness",
		"sigma_diffuse_r", "sigma_diffuse_g", "sigma_diffuse_b", "sigma_specular_r", "sigma_specular_g", "sigma_specular_b", "sigma_roughness",
		"observations", "near_specular", "rmse"}
	if err := cw.Write(head); err != nil {
		return err
	}
	f := func(v float64) string { return strconv.FormatFloat(v, 'g', 6, 64) }
	for _, s := range segs {
		row := []string{s.Name, s.Model,
			f(s.Diffuse[0]), f(s.Diffuse[1]), f(s.Diffuse[2]),
			f(s.Specular[0]), f(s.Specular[1]), f(s.Specular[2]), f(s.Roughness)}
		if s.Sigma != nil {
			row = append(row, f(s.Sigma.Diffuse[0]), f(s.Sigma.Diffuse[1]), f(s.Sigma.Diffuse[2]),
				f(s.Sigma.Specular[0]), f(s.Sigma.Specular[1]), f(s.Sigma.Specular[2]), f(s.Sigma.Roughness))
		} else {
			row = append(row, "", "", "", "", "", "", "")
		}
		row = append(row, strconv.Itoa(s.Observations), strconv.Itoa(s.NearSpecular))
		if s.RMSE != nil {
			row = append(row, f(*s.RMSE))
		} else {
			row = append(row, "")
		}
		if err := cw.Write(row); err != nil {
			return err
		}
	}
	cw.Flush()
	return cw.Error()
}
