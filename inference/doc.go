// Package inference weighs the Galaxy from the stars a run vetted (starvet
// weigh): it reads the run's stars from the ledger, chooses each method's
// sample from the data (never from the verdicts, which assumed the
// potential being measured), draws each star's Monte Carlo draws again from
// its own stream (vetting.KinematicInput with the run's settings, but the
// flat velocity prior: the tail model is the prior on the speed), and runs
// the two methods of galaxy/weigh: the local escape speed from the
// velocity tail, with the NFW halo mass it implies, and the halo mass from
// the orbits of candidate Galactic-Centre ejectees. Every result and every
// star considered, with why it entered or not, is stored in the ledger
// (db.Inference).
//
// Units: speeds km/s, positions kpc (Galactocentric frame of
// galaxy/frames), masses in solar masses (M200: the mass within r200,
// where the mean density is 200 times the critical density).
package inference
