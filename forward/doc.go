// Package forward computes transmission spectra of layered planetary
// atmospheres: pressure grid, temperature profile, composition, hydrostatic
// structure with 1/r^2 gravity, slant optical depth, transit depth, clouds
// and hazes, and binning onto an instrument's wavelength bins.
//
// Units inside the package are SI (m, kg, s, K, Pa); wavelengths are in m.
//
// # Use
//
// A Model is prepared once from a Config (grids, composition, opacity
// tables, bins): NewModel resamples every table onto the model's
// wavenumber grid, evaluates the Rayleigh cross-sections and the bin
// weights. Each goroutine then owns a Workspace, and
//
//	err := model.Transit(dst, &state, ws)
//
// fills dst with the transit depth for one State (profile, mixing ratios,
// radius, mass, clouds, haze) without allocating. States that cannot be
// computed (unbound atmosphere, mixing ratios over 1, a cloud deck below the
// model, bad values) return a *StateError whose Kind tells them apart.
//
// # Physics
//
// Levels are log-spaced in pressure from the bottom (index 0) to the top;
// layer j lies between levels j and j+1 at the geometric-mean pressure and
// one temperature. Hydrostatic equilibrium with gravity GM/r^2 is exact for
// such isothermal layers:
//
//	1/r_{j+1} = 1/r_j - k_B T_j ln(p_j/p_{j+1}) / (mu m_u G M),
//
// pinned by the reference radius at the reference pressure (default 10
// bar). The absorption coefficient of a layer is
// n (sum_g x_g sigma_g(P, T) + sum_g x_g sigma_Rayleigh,g + sigma_grey +
// sigma_haze) + n^2 sum_pairs x_a x_b k_ab(T). The slant optical depth and
// the transit depth follow Brown (2001, ApJ 553, 1006) in the discrete form
// of Transit's documentation.
//
// # Speed
//
// Per call the work is: the mixing-ratio-weighted sum of the gases' tables
// on the few (P, T) grid rows the layers touch (interpolation is linear,
// so mixing first is exact); per-layer interpolation of those sums; the
// triangular slant sums, ray by ray in blocks of 256 model points kept in
// cache, each stopped early once the whole block is opaque; and a
// branch-free 1 - exp(-tau). Rays below an opaque cloud deck, and the
// layers they alone cross, are skipped.
package forward
