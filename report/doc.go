// Package report writes a static HTML page with SVG plots for one run of a
// starvet ledger.
//
// In: a Source (implemented by *db.Ledger; PositionSource and
// CrossingSource are optional extras), a run id (0 = latest complete run),
// an output directory and Options (escape radius, centre radius, Solar
// distance: the ledger does not record them, so they are given or the
// stated defaults are used).
//
// Out: DIR/index.html, which needs no network (inline CSS, a few lines of
// inline script that only mark the plots as loaded), and four SVG files
// drawn with gonum.org/v1/plot: speed.svg (Galactocentric speed, median and
// 16-84 per cent range, in km/s against Galactocentric distance in kpc,
// over the adopted model's escape speed in the plane and toward the pole,
// or each star's stored escape speed when the model cannot be rebuilt),
// sky.svg (Hammer-Aitoff equal-area map in Galactic l, b, l increasing to
// the left), p_unbound.svg (histogram of p_unbound over the stars with a
// radial velocity, stacked by status) and crossings.svg (back-traced
// crossings of z = 0 in Galactocentric x, y, kpc, Sun at x = -R0, with the
// centre radius). The page also lists the run, its catalogs, counts per
// status, the most frequent rejection reasons and the unbound and marginal
// candidates by p_unbound, with a caution that an unbound status is a
// candidate for follow-up, not a discovery.
//
// Every status (the words of starvet/verdict, read as the ledger's TEXT; an
// unknown word gets a style of its own) has its own Okabe-Ito colour and its
// own filled shape. The
// same ledger and options give byte-identical files. Write returns a
// Summary with the number of markers drawn per plot and status and the
// number of stars left out for want of values, which the page states too.
package report
