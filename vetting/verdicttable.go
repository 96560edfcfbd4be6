package vetting

import (
	"starvet/catalog"
	"starvet/db"
)

// verdictColumns are the columns of VerdictTable, in the order of
// `starvet list --csv`, with units, UCDs and the ledger's descriptions
// (db/SCHEMA.md).
var verdictColumns = []struct {
	name, unit, ucd, doc, kind string
}{
	{"run_id", "", "", "run", catalog.OutInt},
	{"star_id", "", "meta.id;meta.main", "star", catalog.OutText},
	{"status", "", "", "rejected, needs-rv, bound, marginal, unbound or withdrawn", catalog.OutText},
	{"quality", "", "meta.code.qual", "quality-cut result: pass, flag or reject", catalog.OutText},
	{"computed_in_run", "", "", "run that computed this verdict; equal to run_id unless carried forward", catalog.OutInt},
	{"input_hash", "", "", "hash of everything the computation depended on", catalog.OutText},
	{"distance_method", "", "", "how the distance was obtained", catalog.OutText},
	{"has_rv", "", "", "1 if a radial velocity was used", catalog.OutInt},
	{"speed_p16_kms", "km/s", "phys.veloc", "Galactic rest-frame speed, 16th percentile of the Monte Carlo samples", catalog.OutFloat},
	{"speed_p50_kms", "km/s", "phys.veloc", "Galactic rest-frame speed, median of the Monte Carlo samples", catalog.OutFloat},
	{"speed_p84_kms", "km/s", "phys.veloc", "Galactic rest-frame speed, 84th percentile of the Monte Carlo samples", catalog.OutFloat},
	{"speed_lower_p50_kms", "km/s", "phys.veloc", "median lower bound on the speed from the tangential velocity alone", catalog.OutFloat},
	{"r_gc_kpc", "kpc", "", "Galactocentric distance", catalog.OutFloat},
	{"v_esc_kms", "km/s", "", "escape speed of the potential at the star", catalog.OutFloat},
	{"p_unbound", "", "stat.probability", "fraction of Monte Carlo samples faster than the local escape speed", catalog.OutFloat},
	{"p_unbound_lower", "", "stat.probability", "the same from the tangential lower bound", catalog.OutFloat},
	{"origin", "", "", "traced-back origin class", catalog.OutText},
	{"p_gc_origin", "", "stat.probability", "fraction of samples whose orbit traced back passes near the Galactic Centre", catalog.OutFloat},
	{"gc_consistency", "", "", "consistency measure of the trajectory with a Galactic Centre origin", catalog.OutFloat},
	{"flight_time_myr", "Myr", "", "time since ejection along the traced-back orbit", catalog.OutFloat},
	{"model_name", "", "", "Galactic potential model used", catalog.OutText},
}

// VerdictTable collects ledger verdicts as an output table: Add each row,
// then write Table.
type VerdictTable struct {
	Table catalog.OutTable
}

// NewVerdictTable is an empty table named name.
func NewVerdictTable(name string) *VerdictTable {
	v := &VerdictTable{Table: catalog.OutTable{Name: name}}
	for _, c := range verdictColumns {
		oc := catalog.OutColumn{Name: c.name, Unit: c.unit, UCD: c.ucd, Description: c.doc}
		switch c.kind {
		case catalog.OutInt:
			oc.Int = []int64{}
		case catalog.OutFloat:
			oc.Float = []float64{}
		default:
			oc.Text = []string{}
		}
		v.Table.Columns = append(v.Table.Columns, oc)
	}
	return v
}

// Add appends one verdict.
func (v *VerdictTable) Add(r db.VerdictRow) {
	hasRV := int64(0)
	if r.HasRV {
		hasRV = 1
	}
	ints := []int64{r.RunID, r.ComputedInRun, hasRV}
	floats := []float64{r.SpeedP16Kms, r.SpeedP50Kms, r.SpeedP84Kms, r.SpeedLowerP50Kms, r.RGCKpc, r.VEscKms,
		r.PUnbound, r.PUnboundLower, r.PGCOrigin, r.GCConsistency, r.FlightTimeMyr}
	texts := []string{r.StarID, r.Status, r.Quality, r.InputHash, r.DistanceMethod, r.Origin, r.ModelName}
	for j := range v.Table.Columns {
		c := &v.Table.Columns[j]
		switch {
		case c.Int != nil:
			c.Int, ints = append(c.Int, ints[0]), ints[1:]
		case c.Float != nil:
			c.Float, floats = append(c.Float, floats[0]), floats[1:]
		default:
			c.Text, texts = append(c.Text, texts[0]), texts[1:]
		}
	}
}
