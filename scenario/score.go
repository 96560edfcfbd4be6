package scenario

import (
	"encoding/csv"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"sort"
	"strconv"
	"strings"

	"starvet/galaxy/orbit"
	"starvet/verdict"
)

// Verdict is what the pipeline concluded about one primary star.
type Verdict struct {
	Status verdict.Status
	Origin orbit.Origin
}

// Targets the demo's recovery figures must meet.
const (
	TargetCompleteness  = 0.95
	TargetContamination = 0.02
)

// Figures are the recovery figures of a run against the truth. A ratio
// whose denominator is zero is NaN.
type Figures struct {
	// Completeness: injected (gc_ejectee, disk_runaway, halo_fast),
	// decidable (truly unbound, adequate data, margin >= DecidableSigma),
	// non-artefact stars ending "unbound", over all such stars.
	Completeness             float64
	NCompletenessDenominator int
	NCompletenessHits        int
	// CompletenessAdequate is the same ratio over every injected, truly
	// unbound, adequate-data, non-artefact star, whatever its margin.
	CompletenessAdequate float64
	NAdequateDenominator int
	NAdequateHits        int
	// Contamination: stars ending "unbound" that are truly bound or
	// artefacts (or absent from the truth), over all stars ending
	// "unbound".
	Contamination  float64
	NUnbound       int
	NContaminating int
	// OriginAccuracy: Galactic Centre ejectees ending "unbound" whose
	// origin is "galactic-centre", over the ejectees ending "unbound".
	OriginAccuracy     float64
	NOriginDenominator int
	// TrapsUnbound counts artefacts ending "unbound", per trap kind;
	// BoundUnbound counts truly bound non-artefacts ending "unbound", per
	// population. Together (plus unknown ids) they make NContaminating.
	TrapsUnbound map[string]int
	BoundUnbound map[string]int
	// HighPMWithRV: high proper-motion stars with a usable spectrum in the
	// truth whose status is neither "needs-rv" nor missing (their spectrum
	// was matched after epoch propagation), over all such stars.
	HighPMWithRV float64
	NHighPM      int
	// BadRowsKept counts primary rows with a bad value that still carry a
	// status other than "rejected"; they should have been quarantined.
	BadRowsKept int
	NBadRows    int
	// Missing counts truth rows other than bad rows without a verdict;
	// Unknown counts verdicts for ids absent from the truth.
	Missing, Unknown int
}

// MeetsTargets reports whether completeness >= 95% and contamination <= 2%.
func (f Figures) MeetsTargets() bool {
	return f.Completeness >= TargetCompleteness && f.Contamination <= TargetContamination
}

// String is a short human-readable summary.
func (f Figures) String() string {
	var b strings.Builder
	fmt.Fprintf(&b, "completeness %.1f%% (%d/%d; %.1f%% (%d/%d) counting every margin), contamination %.1f%% (%d/%d), origin accuracy %.1f%% of %d",
		100*f.Completeness, f.NCompletenessHits, f.NCompletenessDenominator,
		100*f.CompletenessAdequate, f.NAdequateHits, f.NAdequateDenominator,
		100*f.Contamination, f.NContaminating, f.NUnbound, 100*f.OriginAccuracy, f.NOriginDenominator)
	fmt.Fprintf(&b, "; high-pm with rv %.1f%% of %d; bad rows kept %d/%d; missing %d, unknown %d",
		100*f.HighPMWithRV, f.NHighPM, f.BadRowsKept, f.NBadRows, f.Missing, f.Unknown)
	counts := func(title string, m map[string]int) {
		if len(m) == 0 {
			return
		}
		keys := make([]string, 0, len(m))
		for k := range m {
			keys = append(keys, k)
		}
		sort.Strings(keys)
		b.WriteString(title)
		for _, k := range keys {
			fmt.Fprintf(&b, " %s=%d", k, m[k])
		}
	}
	counts("; traps ending unbound:", f.TrapsUnbound)
	counts("; bound stars ending unbound:", f.BoundUnbound)
	return b.String()
}

func ratio(n, d int) float64 {
	if d == 0 {
		return math.NaN()
	}
	return float64(n) / float64(d)
}

// Score compares verdicts (keyed by primary star id) with the truth.
func Score(truth []TruthRow, verdicts map[string]Verdict) Figures {
	sc := scorer{f: Figures{TrapsUnbound: map[string]int{}, BoundUnbound: map[string]int{}}}
	known := make(map[string]bool, len(truth))
	for _, t := range truth {
		known[t.StarID] = true
		v, ok := verdicts[t.StarID]
		sc.add(t, v, ok)
	}
	for id, v := range verdicts {
		if !known[id] {
			sc.addUnknown(v)
		}
	}
	return sc.figures()
}

// scorer accumulates the counts of Figures over the truth rows.
type scorer struct {
	f                   Figures
	hpmHits, originHits int
}

// add counts truth row t with its verdict v (ok: there is one).
func (sc *scorer) add(t TruthRow, v Verdict, ok bool) {
	f := &sc.f
	unbound := ok && v.Status == verdict.Unbound
	if t.Trap == TrapBadValue {
		f.NBadRows++
		if ok && v.Status != verdict.Rejected {
			f.BadRowsKept++
		}
	} else if !ok {
		f.Missing++
	}
	if Injected(t.Population) && t.TrulyUnbound && t.AdequateData && !t.Artefact {
		f.NAdequateDenominator++
		if unbound {
			f.NAdequateHits++
		}
		if t.Decidable {
			f.NCompletenessDenominator++
			if unbound {
				f.NCompletenessHits++
			}
		}
	}
	if unbound {
		sc.addUnbound(t, v)
	}
	if t.Trap == TrapHighPM && t.HasSpectrum {
		f.NHighPM++
		if ok && v.Status != verdict.NeedsRV {
			sc.hpmHits++
		}
	}
}

// addUnbound counts a truth row whose verdict v is unbound: contamination
// and origin accuracy.
func (sc *scorer) addUnbound(t TruthRow, v Verdict) {
	f := &sc.f
	f.NUnbound++
	if !t.TrulyUnbound || t.Artefact {
		f.NContaminating++
	}
	if t.Artefact {
		f.TrapsUnbound[t.Trap]++
	} else if !t.TrulyUnbound {
		f.BoundUnbound[t.Population]++
	}
	if t.Population == PopGCEjectee {
		f.NOriginDenominator++
		if v.Origin == orbit.OriginGC {
			sc.originHits++
		}
	}
}

// addUnknown counts a verdict for an id absent from the truth.
func (sc *scorer) addUnknown(v Verdict) {
	sc.f.Unknown++
	if v.Status == verdict.Unbound {
		sc.f.NUnbound++
		sc.f.NContaminating++
	}
}

// figures returns the counts with their ratios.
func (sc *scorer) figures() Figures {
	f := sc.f
	f.Completeness = ratio(f.NCompletenessHits, f.NCompletenessDenominator)
	f.CompletenessAdequate = ratio(f.NAdequateHits, f.NAdequateDenominator)
	f.Contamination = ratio(f.NContaminating, f.NUnbound)
	f.OriginAccuracy = ratio(sc.originHits, f.NOriginDenominator)
	f.HighPMWithRV = ratio(sc.hpmHits, f.NHighPM)
	return f
}

// TruthError is a problem in a truth file, with its position: 1-based line
// and field index (for a CSV syntax error, the byte column csv reports).
type TruthError struct {
	File         string
	Line, Column int
	Reason       string
}

func (e *TruthError) Error() string {
	return fmt.Sprintf("%s:%d:%d: %s", e.File, e.Line, e.Column, e.Reason)
}

func (e *TruthError) Unwrap() error { return ErrTruth }

// LoadTruth reads a truth.csv written by Generate or Update.
func LoadTruth(path string) ([]TruthRow, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, fmt.Errorf("scenario: %w", err)
	}
	defer f.Close()
	return readTruth(f, path)
}

func readTruth(r io.Reader, name string) ([]TruthRow, error) {
	cr := csv.NewReader(r)
	cr.FieldsPerRecord = -1
	header, col, err := readTruthHeader(cr, name)
	if err != nil {
		return nil, err
	}
	var rows []TruthRow
	for {
		rec, err := cr.Read()
		if errors.Is(err, io.EOF) {
			break
		}
		if err != nil {
			var pe *csv.ParseError
			if errors.As(err, &pe) {
				return nil, &TruthError{File: name, Line: pe.Line, Column: pe.Column, Reason: pe.Err.Error()}
			}
			return nil, fmt.Errorf("scenario: %s: %w", name, err)
		}
		line, _ := cr.FieldPos(0)
		if len(rec) != len(header) {
			return nil, &TruthError{File: name, Line: line, Column: min(len(rec), len(header)) + 1,
				Reason: fmt.Sprintf("row has %d fields, header has %d", len(rec), len(header))}
		}
		t, err := parseTruthRow(cr, name, rec, col)
		if err != nil {
			return nil, err
		}
		if t.StarID == "" {
			return nil, &TruthError{File: name, Line: line, Column: col["star_id"] + 1, Reason: "empty star_id"}
		}
		rows = append(rows, t)
	}
	return rows, nil
}

// readTruthHeader reads the header and returns it with the index of each
// column by name; every column of truthHeader must be there.
func readTruthHeader(cr *csv.Reader, name string) ([]string, map[string]int, error) {
	header, err := cr.Read()
	if err != nil {
		return nil, nil, &TruthError{File: name, Line: 1, Column: 1, Reason: "cannot read header: " + err.Error()}
	}
	col := make(map[string]int, len(header))
	for i, h := range header {
		col[h] = i
	}
	for i, h := range truthHeader {
		if _, ok := col[h]; !ok {
			return nil, nil, &TruthError{File: name, Line: 1, Column: i + 1, Reason: fmt.Sprintf("missing column %q", h)}
		}
	}
	return header, col, nil
}

// parseTruthRow converts record rec, just read by cr, into a TruthRow; the
// error is the first bad number or flag.
func parseTruthRow(cr *csv.Reader, name string, rec []string, col map[string]int) (TruthRow, error) {
	var perr *TruthError
	get := func(h string) (string, int) { i := col[h]; return rec[i], i }
	num := func(h string) float64 {
		s, i := get(h)
		if s == "" || perr != nil {
			return math.NaN()
		}
		v, err := strconv.ParseFloat(s, 64)
		if err != nil {
			l, _ := cr.FieldPos(i)
			perr = &TruthError{File: name, Line: l, Column: i + 1, Reason: fmt.Sprintf("%s: not a number: %q", h, s)}
		}
		return v
	}
	flag := func(h string) bool {
		s, i := get(h)
		if perr != nil {
			return false
		}
		v, err := strconv.ParseBool(s)
		if err != nil {
			l, _ := cr.FieldPos(i)
			perr = &TruthError{File: name, Line: l, Column: i + 1, Reason: fmt.Sprintf("%s: not true/false: %q", h, s)}
		}
		return v
	}
	str := func(h string) string { s, _ := get(h); return s }
	t := TruthRow{
		StarID: str("star_id"), Population: str("population"), TrulyUnbound: flag("truly_unbound"),
		AdequateData: flag("adequate_data"), MarginSigma: num("margin_sigma"), Decidable: flag("decidable"), Trap: str("trap"), Artefact: flag("artefact"),
		OriginTrue: orbit.Origin(str("origin_true")), FlightTimeMyrTrue: num("flight_time_myr_true"),
		VGCTrueKms: num("v_gc_true_kms"), VEscTrueKms: num("v_esc_true_kms"), DistTrueKpc: num("dist_true_kpc"),
		PosKpc:      [3]float64{num("x_kpc"), num("y_kpc"), num("z_kpc")},
		VelKms:      [3]float64{num("vx_kms"), num("vy_kms"), num("vz_kms")},
		InFootprint: flag("in_footprint"), HasSpectrum: flag("has_spectrum"), SpecID: str("spec_id"),
	}
	if perr != nil {
		return TruthRow{}, perr
	}
	return t, nil
}
