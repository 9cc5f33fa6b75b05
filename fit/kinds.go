package fit

import (
	"fmt"
	"strconv"
	"strings"
)

// A paramDef describes one parameter of a model component: its key in the
// model file, its unit and meaning, and its default when omitted (required
// parameters have none).
type paramDef struct {
	key      string
	unit     string
	doc      string
	required bool
	def      float64
	// lo, hi bound the physically allowed values (inclusive unless open is
	// set); a prior or fixed value outside is an error.
	lo, hi float64
	openLo bool
}

// A kindDef is one kind of lens or source component.
type kindDef struct {
	name   string
	doc    string
	params []paramDef
	// alternatives lists groups of parameters of which exactly one group
	// must be given (e.g. NFW by κ_s and r_s, or by M200 and c).
	alternatives [][]string
	// settings are non-parameter keys (strings, integers, booleans).
	settings []settingDef
}

type settingDef struct {
	key string
	doc string
}

const inf = 1e308

func pos(key, unit, doc string) paramDef {
	return paramDef{key: key, unit: unit, doc: doc, lo: 0, hi: inf}
}

var (
	pX = paramDef{key: "x", unit: "arcsec", doc: "centre, east of the phase centre", lo: -inf, hi: inf}
	pY = paramDef{key: "y", unit: "arcsec", doc: "centre, north of the phase centre", lo: -inf, hi: inf}
	pQ = paramDef{key: "q", unit: "", doc: "axis ratio b/a", def: 1, lo: 0, hi: 1, openLo: true}
	// pQpot is the axis ratio of an elliptical lensing potential, limited
	// so that the density stays physical (lensmodel.MaxPotentialEllipticity).
	pQpot  = paramDef{key: "q", unit: "", doc: "axis ratio of the potential, in [0.8165, 1]", def: 1, lo: 0.8165, hi: 1}
	pPA    = paramDef{key: "pa", unit: "deg", doc: "major-axis position angle, east of north", lo: -inf, hi: inf}
	pAlpha = paramDef{key: "alpha", unit: "", doc: "spectral index, S ∝ ν^alpha", lo: -inf, hi: inf}
)

func required(p paramDef) paramDef { p.required = true; return p }

// lensKinds are the mass components a [[lens]] table may name.
var lensKinds = []kindDef{
	{name: "point", doc: "point mass", params: []paramDef{pX, pY, required(pos("theta_e", "arcsec", "Einstein radius"))}},
	{name: "sie", doc: "isothermal ellipsoid, singular or cored (q = 1: isothermal sphere)", params: []paramDef{
		pX, pY, required(pos("theta_e", "arcsec", "Einstein radius")), pQ, pPA,
		pos("core", "arcsec", "core radius s (0 = singular)")}},
	{name: "powerlaw", doc: "elliptical power-law mass distribution", params: []paramDef{
		pX, pY, required(pos("theta_e", "arcsec", "Einstein radius")), pQ, pPA,
		{key: "slope", doc: "3-D density slope γ in (1, 3) (2 = isothermal)", def: 2, lo: 1.001, hi: 2.999}}},
	{name: "nfw", doc: "NFW halo, by kappa_s and r_s or by m200 and c (needs [cosmology])", params: []paramDef{
		pX, pY, pos("kappa_s", "", "characteristic convergence ρ_s r_s/Σ_cr"), pos("r_s", "arcsec", "scale radius"),
		pos("m200", "Msun", "mass inside r200 (200 × critical density at z_lens)"), pos("c", "", "concentration r200/r_s"),
		pQpot, pPA}, alternatives: [][]string{{"kappa_s", "r_s"}, {"m200", "c"}}},
	{name: "gnfw", doc: "generalised NFW halo with free inner slope (gamma = 1: NFW, 0: cored)", params: []paramDef{
		pX, pY, required(pos("kappa_s", "", "characteristic convergence ρ_s r_s/Σ_cr")),
		required(paramDef{key: "r_s", unit: "arcsec", doc: "scale radius", lo: 0, hi: inf, openLo: true}),
		{key: "gamma", doc: "inner 3-D density slope, in [0, 2)", def: 1, lo: 0, hi: 1.999},
		pQpot, pPA}},
	{name: "burkert", doc: "cored Burkert halo", params: []paramDef{
		pX, pY, required(pos("kappa_s", "", "characteristic convergence ρ_0 r_0/Σ_cr")),
		required(paramDef{key: "r_s", unit: "arcsec", doc: "core radius r_0", lo: 0, hi: inf, openLo: true}),
		pQpot, pPA}},
	{name: "shear", doc: "external shear", params: []paramDef{
		required(pos("gamma", "", "shear strength")),
		{key: "angle", unit: "deg", doc: "shear angle φ_γ, east of north: images stretch along it", lo: -inf, hi: inf},
		{key: "x", unit: "arcsec", doc: "shear centre, east", lo: -inf, hi: inf},
		{key: "y", unit: "arcsec", doc: "shear centre, north", lo: -inf, hi: inf}}},
	{name: "sheet", doc: "uniform convergence sheet", params: []paramDef{
		required(paramDef{key: "kappa", doc: "convergence κ_ext", lo: -inf, hi: inf})}},
}

// sourceKinds are the source components a [[source]] table may name.
var sourceKinds = []kindDef{
	{name: "sersic", doc: "elliptical Sérsic profile", params: []paramDef{
		pX, pY, required(pos("flux", "mJy", "total flux at the reference frequency")),
		required(paramDef{key: "r_eff", unit: "arcsec", doc: "half-light semi-major radius", lo: 0, hi: inf, openLo: true}),
		{key: "n", doc: "Sérsic index", def: 1, lo: 0.2, hi: 10}, pQ, pPA, pAlpha}},
	{name: "gaussian", doc: "elliptical Gaussian", params: []paramDef{
		pX, pY, required(pos("flux", "mJy", "total flux at the reference frequency")),
		required(paramDef{key: "fwhm", unit: "arcsec", doc: "major-axis FWHM", lo: 0, hi: inf, openLo: true}),
		pQ, pPA, pAlpha}},
	{name: "point", doc: "point source (its images are summed exactly in the visibilities)", params: []paramDef{
		pX, pY, required(pos("flux", "mJy", "flux at the reference frequency")), pAlpha}},
	{name: "pixels", doc: "pixelated source reconstructed for each lens model, regularisation chosen by evidence", settings: []settingDef{
		{"size", "source pixels on a side (default 40)"},
		{"extent", "half-width of the source grid in arcsec (default: cover the caustics)"},
		{"regularization", `"gradient" (default), "curvature" or "zeroth"`},
		{"lambda", `regularisation strength, or "evidence" (default) to maximise the evidence`},
		{"adaptive", "true: cells follow the magnification"},
	}},
}

func findKind(kinds []kindDef, name string) *kindDef {
	for i := range kinds {
		if kinds[i].name == name {
			return &kinds[i]
		}
	}
	return nil
}

func kindNames(kinds []kindDef) []string {
	s := make([]string, len(kinds))
	for i, k := range kinds {
		s[i] = k.name
	}
	return s
}

// KindsHelp returns the reference table of every lens and source kind and
// its parameters, with units and defaults, as printed by "deflect fit -h
// kinds" and kept in README.md.
func KindsHelp() string {
	var b strings.Builder
	b.WriteString("Parameters: a number fixes a value; a table such as {min = 0, max = 1} frees it\n")
	b.WriteString("(prior = \"uniform\" (default), \"normal\" with mean and sd, or \"log-uniform\";\n")
	b.WriteString("start sets the starting value; {same_as = \"name.key\"} ties it to another).\n")
	for _, group := range []struct {
		title string
		kinds []kindDef
	}{{"[[lens]] kinds", lensKinds}, {"[[source]] kinds", sourceKinds}} {
		fmt.Fprintf(&b, "\n%s\n", group.title)
		for _, k := range group.kinds {
			fmt.Fprintf(&b, "\n  kind = %q — %s\n", k.name, k.doc)
			for _, p := range k.params {
				def := "required"
				if !p.required {
					def = "default " + strconv.FormatFloat(p.def, 'g', -1, 64)
				}
				unit := p.unit
				if unit == "" {
					unit = "—"
				}
				fmt.Fprintf(&b, "    %-9s %-7s %-17s %s\n", p.key, unit, def, p.doc)
			}
			for _, s := range k.settings {
				fmt.Fprintf(&b, "    %-9s %-7s %-17s %s\n", s.key, "setting", "", s.doc)
			}
			if len(k.alternatives) > 0 {
				groups := make([]string, len(k.alternatives))
				for i, alt := range k.alternatives {
					groups[i] = strings.Join(alt, " and ")
				}
				fmt.Fprintf(&b, "    (give %s)\n", strings.Join(groups, ", or "))
			}
		}
	}
	return b.String()
}
