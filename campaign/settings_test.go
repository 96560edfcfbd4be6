package campaign

import (
	"os"
	"reflect"
	"strings"
	"testing"
)

// Ledgers hold these names and texts: a defaults-only campaign records
// exactly these, in the table's order.
func TestValues(t *testing.T) {
	c, err := Parse("camp.toml", []byte(baseText), "/data")
	if err != nil {
		t.Fatal(err)
	}
	want := []NameValue{
		{"seed", "1"},
		{"parallax_zero_point_mas", "0"},
		{"match.radius_arcsec", "1"},
		{"match.n_sigma", "0"},
		{"match.radius_floor_arcsec", "0"},
		{"match.duplicate_radius_arcsec", "0.4"},
		{"match.ambiguity_ratio", "3"},
		{"galaxy.sun_distance_kpc", "8.122"},
		{"galaxy.sun_height_pc", "20.8"},
		{"galaxy.sun_velocity_u_kms", "12.9"},
		{"galaxy.sun_velocity_v_kms", "245.6"},
		{"galaxy.sun_velocity_w_kms", "7.78"},
		{"potential.escape_radius_kpc", "0"},
		{"kinematics.distance", "auto"},
		{"kinematics.edsd_length_kpc", "1.35"},
		{"kinematics.min_parallax_significance", "5"},
		{"kinematics.samples", "1000"},
		{"kinematics.velocity_prior_kms", "150"},
		{"kinematics.unbound_p", "0.8"},
		{"kinematics.marginal_p", "0.5"},
		{"kinematics.stop_sigma", "5"},
		{"kinematics.stop_tail_vesc_fraction", "0.75"},
		{"kinematics.trace_min_p", "0.5"},
		{"kinematics.trace_samples", "200"},
		{"kinematics.trace_myr", "300"},
		{"kinematics.gc_radius_kpc", "1"},
		{"kinematics.disk_radius_kpc", "25"},
		{"catalog.lark_astro.position_err_mas", "0"},
		{"catalog.wren_spec.position_err_mas", "100"},
	}
	if got := c.Values(); !reflect.DeepEqual(got, want) {
		t.Errorf("Values:\ngot  %q\nwant %q", got, want)
	}
	c.Kinematics.UnboundP = 1.0 / 3
	for _, v := range c.Values() {
		if v.Name == SettingUnboundP && v.Value != "0.3333333333333333" {
			t.Errorf("%s = %s, want the shortest exact text", v.Name, v.Value)
		}
	}
}

// Each setting of the table is a row of db/SCHEMA.md's run_settings table
// with the table's meaning, so the two cannot drift apart.
func TestSchemaDocumentsSettings(t *testing.T) {
	data, err := os.ReadFile("../db/SCHEMA.md")
	if err != nil {
		t.Fatal(err)
	}
	rows := map[string]string{} // first cell -> second cell
	for _, line := range strings.Split(string(data), "\n") {
		cells := strings.Split(line, " | ")
		if len(cells) >= 2 && strings.HasPrefix(cells[0], "| `") {
			rows[strings.TrimPrefix(cells[0], "| ")] = strings.TrimSuffix(strings.Join(cells[1:], " | "), " |")
		}
	}
	c := &Campaign{}
	for _, s := range settings {
		s.reset(c)
		var names []string
		for _, v := range s.values(c) {
			names = append(names, "`"+v.Name+"`")
		}
		row, ok := rows[strings.Join(names, ", ")]
		if !ok {
			t.Errorf("%s: no row for %s in db/SCHEMA.md", s.name, strings.Join(names, ", "))
		} else if row != s.about {
			t.Errorf("%s: db/SCHEMA.md says\n%q\nthe table says\n%q", s.name, row, s.about)
		}
	}
}
