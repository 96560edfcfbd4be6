// Package weigh infers the Galaxy's local escape speed and the dark halo
// mass it implies from the stars a campaign has measured. It is physics
// only: no I/O, no pipeline.
//
// Units and frames: speeds in km/s, lengths in kpc, masses in Msun;
// positions and velocities are Galactocentric Cartesian, the frame of
// frames.Sun.ToGalactocentric (the Sun at x < 0, z toward the north
// Galactic pole), as in kinematics.Result.SamplePos and SampleVel.
//
// Method 1, the velocity tail (tail.go): the speeds above v_min follow
// f(v | v_esc, k) = (k+1) (v_esc - v)^k / (v_esc - v_min)^(k+1) (Leonard &
// Tremaine 1990, ApJ 353, 486), mixed with a broad outlier density
// (Williams et al. 2017, MNRAS 468, 2359). Each star enters through its
// Monte Carlo draws, each compared with the escape speed at its own
// position, v_esc0 times the campaign potential's escape-speed ratio
// between that position and the Sun. The posterior of v_esc0 (the escape
// speed at the Sun) is tabulated on a grid and marginalised over the
// power-law slope k and the outlier fraction.
//
// From escape speed to halo mass (nfw.go): the campaign model's bulge and
// disk are held fixed and its NFW halo (Navarro, Frenk & White 1996, ApJ
// 462, 563) replaced by one of virial mass M200 with the concentration of
// Dutton & Maccio 2014 (MNRAS 441, 3359); v_esc(Sun; M200) is monotonic, so
// the quantiles of v_esc0 map to quantiles of M200 and of the circular
// speed at the Sun.
//
// Method 2, the halo's mass from the orbits of Galactic-Centre ejectees
// (orbits.go, orbits_ejection.go; Gnedin et al. 2005, ApJ 634, 344;
// Contigiani, Rossi & Marchetti 2019, MNRAS 487, 4025): a profile
// likelihood over the campaign model's NFW halo scaled on a grid, each
// candidate ejectee scored by the density of its present speed given its
// position under an assumed ejection model (EjectionModel: speed law and
// flight-time window), mixed with a background, with Wilks intervals,
// which on simulated ejectees cover their levels on the refined grid
// (TestOrbitIntervalCalibration). Its answer is conditional on that
// ejection model.
package weigh
