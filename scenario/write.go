package scenario

import (
	"bufio"
	"compress/gzip"
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"strings"

	"starvet/internal/units"
)

// Column headers of the invented files. A few differ from the canonical
// names (and units) on purpose, so the campaign's mapping is exercised.
var (
	astroHeader = []string{"src", "ra", "dec", "ra_err", "dec_err", "plx", "plx_err", "pm_ra", "pm_ra_err", "pm_dec", "pm_dec_err",
		"corr_ra_dec", "corr_parallax_pm_ra", "corr_parallax_pm_dec", "corr_pm_ra_pm_dec",
		"fit_residual", "excess_noise", "excess_noise_sig", "fit_visits", "duplicate_flag", "mag"}
	specHeader = []string{"spec_id", "ra", "dec", "ra_err", "dec_err", "vel", "vel_err", "snr", "dist_mod", "dist_mod_err"}
	photHeader = []string{"phot_id", "ra_h", "decl", "ra_unc", "dec_unc", "m_broad", "c_index"}
)

func ff(v float64, prec int) string {
	if math.IsNaN(v) {
		return ""
	}
	return strconv.FormatFloat(v, 'f', prec, 64)
}

// csvWriter writes comma-separated rows; no value written here contains a
// comma, a quote or a newline, so no quoting is needed.
type csvWriter struct {
	w    *bufio.Writer
	line int
}

func (c *csvWriter) row(cells []string) {
	c.w.WriteString(strings.Join(cells, ","))
	c.w.WriteByte('\n')
	c.line++
}

// createCSV opens path for writing, gzip-compressed if it ends in .gz, and
// returns the writer and a close function that reports write errors.
func createCSV(path string) (*csvWriter, func() error, error) {
	f, err := os.Create(path)
	if err != nil {
		return nil, nil, fmt.Errorf("scenario: %w", err)
	}
	var out io.Writer = f
	var zw *gzip.Writer
	if strings.HasSuffix(path, ".gz") {
		// Zero ModTime and no name: byte-identical output. Fastest level:
		// the default level took most of the generator's time.
		zw, _ = gzip.NewWriterLevel(f, gzip.BestSpeed)
		out = zw
	}
	bw := bufio.NewWriterSize(out, 1<<16)
	closeFn := func() error {
		err := bw.Flush()
		if zw != nil {
			err = firstErr(err, zw.Close())
		}
		err = firstErr(err, f.Close())
		if err != nil {
			return fmt.Errorf("scenario: writing %s: %w", path, err)
		}
		return nil
	}
	return &csvWriter{w: bw}, closeFn, nil
}

func firstErr(a, b error) error {
	if a != nil {
		return a
	}
	return b
}

func headerIndex(h []string, name string) int {
	for i, x := range h {
		if x == name {
			return i
		}
	}
	panic("scenario: no header " + name)
}

// applyBad puts a bad cell into cells and records it.
func (s *Scenario) applyBad(cells, header []string, b *badCell, file string, line int, id string) {
	i := headerIndex(header, b.header)
	cells[i] = b.text
	s.BadRows = append(s.BadRows, BadRow{File: file, Line: line, Column: i + 1, ColumnName: b.header, ID: id, Reason: b.reason})
}

func (s *Scenario) writeAstrometry() error {
	cw, closeFn, err := createCSV(s.AstrometryPath)
	if err != nil {
		return err
	}
	cw.row(astroHeader)
	base := filepath.Base(s.AstrometryPath)
	for _, st := range s.stars {
		a := &st.astro
		cells := []string{st.id, ff(a.raDeg, 9), ff(a.decDeg, 9), ff(a.raErrMas, 4), ff(a.decErrMas, 4),
			ff(a.plxMas, 4), ff(a.plxErrMas, 4), ff(a.pmRA, 4), ff(a.pmRAErr, 4), ff(a.pmDec, 4), ff(a.pmDecErr, 4),
			ff(a.corrRADec, 3), ff(a.corrPlxPMRA, 3), ff(a.corrPlxPMDec, 3), ff(a.corrPMPM, 3),
			ff(a.fitResidual, 3), ff(a.excessNoiseMas, 4), ff(a.excessNoiseSig, 3), strconv.Itoa(a.fitVisits),
			strconv.Itoa(a.duplicateFlag), ff(a.mag, 4)}
		if st.bad != nil {
			s.applyBad(cells, astroHeader, st.bad, base, cw.line+1, st.id)
		}
		cw.row(cells)
	}
	return closeFn()
}

func (s *Scenario) writeSpectroscopy() error {
	cw, closeFn, err := createCSV(s.SpectroscopyPath)
	if err != nil {
		return err
	}
	cw.row(specHeader)
	base := filepath.Base(s.SpectroscopyPath)
	for _, r := range s.specRows {
		if r.release > s.Release {
			continue
		}
		cells := []string{r.id, ff(r.raDeg, 8), ff(r.decDeg, 8), ff(r.posErrMas, 1), ff(r.posErrMas, 1),
			ff(r.rvKms*units.MPerKm, 1), ff(r.rvErrKms*units.MPerKm, 1), ff(r.snr, 1), ff(r.distMod, 3), ff(r.distModErr, 3)}
		if r.bad != nil {
			s.applyBad(cells, specHeader, r.bad, base, cw.line+1, r.id)
		}
		cw.row(cells)
	}
	return closeFn()
}

func (s *Scenario) writePhotometry() error {
	cw, closeFn, err := createCSV(s.PhotometryPath)
	if err != nil {
		return err
	}
	cw.row(photHeader)
	for _, r := range s.photRows {
		cw.row([]string{r.id, ff(r.raDeg/15, 10), ff(r.decDeg, 9), ff(r.posErrArcsec, 3), ff(r.posErrArcsec, 3),
			ff(r.mag, 3), ff(r.color, 3)})
	}
	return closeFn()
}

// truthHeader is the header of truth.csv.
var truthHeader = []string{"star_id", "population", "truly_unbound", "adequate_data", "margin_sigma", "decidable", "trap", "artefact", "origin_true",
	"flight_time_myr_true", "v_gc_true_kms", "v_esc_true_kms", "dist_true_kpc",
	"x_kpc", "y_kpc", "z_kpc", "vx_kms", "vy_kms", "vz_kms", "in_footprint", "has_spectrum", "spec_id"}

// fg formats with the shortest text that reads back to the same float64.
func fg(v float64) string {
	if math.IsNaN(v) {
		return ""
	}
	return strconv.FormatFloat(v, 'g', -1, 64)
}

func writeTruth(path string, rows []TruthRow) error {
	cw, closeFn, err := createCSV(path)
	if err != nil {
		return err
	}
	cw.row(truthHeader)
	for _, r := range rows {
		cw.row([]string{r.StarID, r.Population, strconv.FormatBool(r.TrulyUnbound), strconv.FormatBool(r.AdequateData),
			fg(r.MarginSigma), strconv.FormatBool(r.Decidable), r.Trap, strconv.FormatBool(r.Artefact), string(r.OriginTrue), fg(r.FlightTimeMyrTrue), fg(r.VGCTrueKms),
			fg(r.VEscTrueKms), fg(r.DistTrueKpc), fg(r.PosKpc[0]), fg(r.PosKpc[1]), fg(r.PosKpc[2]),
			fg(r.VelKms[0]), fg(r.VelKms[1]), fg(r.VelKms[2]), strconv.FormatBool(r.InFootprint),
			strconv.FormatBool(r.HasSpectrum), r.SpecID})
	}
	return closeFn()
}

func writeBadRows(path string, rows []BadRow) error {
	cw, closeFn, err := createCSV(path)
	if err != nil {
		return err
	}
	cw.row([]string{"file", "line", "column", "column_name", "id", "reason"})
	for _, b := range rows {
		cw.row([]string{b.File, strconv.Itoa(b.Line), strconv.Itoa(b.Column), b.ColumnName, b.ID, b.Reason})
	}
	return closeFn()
}

// writeCampaign writes the campaign TOML by hand (the campaign package is
// not imported, so the format is spelled out here).
func (s *Scenario) writeCampaign() error {
	var b strings.Builder
	q := strconv.Quote
	fmt.Fprintf(&b, "# Invented demo campaign written by the starvet scenario generator.\n")
	fmt.Fprintf(&b, "# Every survey, star id and value in it is made up (release %d).\n", s.Release)
	fmt.Fprintf(&b, "name = %s\n", q(s.Config.Name))
	fmt.Fprintf(&b, "seed = %d\n", int64(s.Config.Seed&(1<<63-1)))
	fmt.Fprintf(&b, "rules = %s\n", q("default"))
	fmt.Fprintf(&b, "parallax_zero_point_mas = 0.0\n\n")
	fmt.Fprintf(&b, "[match]\nradius_arcsec = 1.0\nduplicate_radius_arcsec = 0.4\n\n")
	rel := fmt.Sprintf("R%d", s.Release)
	cat := func(name, file, role string, epoch float64, release string, cols, units [][2]string) {
		fmt.Fprintf(&b, "[[catalog]]\nname = %s\nfile = %s\nrole = %s\nepoch = %.1f\nrelease = %s\n",
			q(name), q(file), q(role), epoch, q(release))
		if len(cols) > 0 {
			fmt.Fprintf(&b, "[catalog.columns]\n")
			for _, c := range cols {
				fmt.Fprintf(&b, "%s = %s\n", c[0], q(c[1]))
			}
		}
		if len(units) > 0 {
			fmt.Fprintf(&b, "[catalog.units]\n")
			for _, c := range units {
				fmt.Fprintf(&b, "%s = %s\n", c[0], q(c[1]))
			}
		}
		b.WriteString("\n")
	}
	cat(AstrometryName, filepath.Base(s.AstrometryPath), "astrometry", AstrometryEpochJyr, rel,
		[][2]string{{"id", "src"}, {"parallax", "plx"}, {"parallax_err", "plx_err"}}, nil)
	cat(SpectroscopyName, filepath.Base(s.SpectroscopyPath), "spectroscopy", SpectroscopyEpochJyr, rel,
		[][2]string{{"id", "spec_id"}, {"rv", "vel"}, {"rv_err", "vel_err"}, {"distance", "dist_mod"}, {"distance_err", "dist_mod_err"}},
		[][2]string{{"rv", "m/s"}, {"rv_err", "m/s"}, {"distance", "mag"}, {"distance_err", "mag"}})
	cat(PhotometryName, filepath.Base(s.PhotometryPath), "photometry", PhotometryEpochJyr, "R1",
		[][2]string{{"id", "phot_id"}, {"ra", "ra_h"}, {"dec", "decl"}, {"ra_err", "ra_unc"}, {"dec_err", "dec_unc"}, {"mag", "m_broad"}, {"color", "c_index"}},
		[][2]string{{"ra", "hour"}, {"ra_err", "arcsec"}, {"dec_err", "arcsec"}})
	sun := s.galaxy.sun
	fmt.Fprintf(&b, "[galaxy]\nsun_distance_kpc = %s\nsun_height_pc = %s\nsun_velocity_kms = [%s, %s, %s]\n\n",
		fg(sun.DistanceKpc), fg(sun.HeightPc), fg(sun.VelocityKms[0]), fg(sun.VelocityKms[1]), fg(sun.VelocityKms[2]))
	fmt.Fprintf(&b, "[potential]\nmodel = %s\n\n", q(s.galaxy.modelName))
	fmt.Fprintf(&b, "[kinematics]\nsamples = %d\n", s.Config.Samples)
	if err := os.WriteFile(s.CampaignPath, []byte(b.String()), 0o644); err != nil {
		return fmt.Errorf("scenario: %w", err)
	}
	return nil
}
