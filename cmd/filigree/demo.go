package main

import (
	"bytes"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"strings"
	"time"

	"github.com/spf13/pflag"

	"github.com/filigree-survey/filigree/mask/footprint"
	"github.com/filigree-survey/filigree/mask/region"
	"github.com/filigree-survey/filigree/survey"
)

// The demo is set in a scenario of our own: the Lanternfish Deep Redshift
// Survey, an invented spectroscopic survey of about 10⁵ galaxies over about
// a thousand square degrees of the northern equatorial sky to z ≈ 0.15.
// Its footprint is a band at 148° ≤ RA ≤ 196°, 0° ≤ Dec ≤ 22°, with holes
// around bright stars and a patchy, less complete strip along its eastern
// edge where fibres were lost.
const demoRegion = `# Lanternfish Deep Redshift Survey (an invented survey for filigree's demo)
# filigree region format: see "filigree footprint --help" and the README.
include box ra=148,188 dec=0,22
# Eastern edge: three patches observed in worse conditions.
include box ra=188,196 dec=0,8 completeness=0.6
include box ra=188,196 dec=8,15 completeness=0.85
include box ra=188,196 dec=15,22 completeness=0.7
# Holes around bright stars.
exclude cap centre=156.5,4.2 radius=1.4
exclude cap centre=171.2,13.8 radius=0.9
exclude cap centre=164.0,19.5 radius=0.6
exclude cap centre=182.7,7.1 radius=1.1
exclude cap centre=191.3,11.6 radius=0.7
`

// demoMockArgs are the mock command's arguments for the demo (the output
// path is added). Changing them invalidates the cached mock.
var demoMockArgs = []string{"--zmin", "0.01", "--zmax", "0.15", "--grid", "256", "--box", "600",
	"--seed", "2026", "--bias", "1.3", "--mag-limit", "18.4", "--mag-bright", "13.5", "--nz-cap", "0.025"}

func init() {
	var dir string
	var keep bool
	register(&command{
		name:    "demo",
		summary: "build the demo survey (an invented one) and run the chain on it",
		usage:   "[-o DIR]",
		example: `  # Build the demo survey in ./filigree-demo and run every step on it:
  filigree demo

  # Somewhere else; a second run reuses the cached mock and is quicker:
  filigree demo -o /tmp/lanternfish`,
		flags: func(a *app, fs *pflag.FlagSet) {
			fs.StringVarP(&dir, "output", "o", "filigree-demo", "directory for the demo's files (created if needed)")
			fs.BoolVar(&keep, "rebuild", false, "rebuild the mock even if a cached one matches")
		},
		run: func(a *app, fs *pflag.FlagSet, args []string) error {
			if len(args) != 0 {
				return usagef("demo takes no positional arguments (use -o DIR)")
			}
			return runDemo(a, dir, keep)
		},
	})
}

// demoFile is one file the demo made, for the closing list.
type demoFile struct{ path, what string }

func runDemo(a *app, dir string, rebuild bool) error {
	t0 := time.Now()
	if err := os.MkdirAll(filepath.Join(dir, "footprint"), 0o755); err != nil {
		return err
	}
	var made []demoFile
	say := func(format string, args ...any) { fmt.Fprintf(a.stderr, "demo: "+format+"\n", args...) }
	say("the Lanternfish Deep Redshift Survey (invented for this demo): ~10⁵ galaxies, ~1000 deg², z ≤ 0.15")

	// 1. The footprint in every supported format.
	fpDir := filepath.Join(dir, "footprint")
	regPath := filepath.Join(fpDir, "lanternfish.reg")
	mapPath := filepath.Join(fpDir, "lanternfish-map.fits")
	mocPath := filepath.Join(fpDir, "lanternfish-moc.fits")
	if err := survey.WriteAtomic(regPath, func(w io.Writer) error {
		_, err := io.WriteString(w, demoRegion)
		return err
	}); err != nil {
		return err
	}
	reg, err := region.Parse(regPath, strings.NewReader(demoRegion))
	if err != nil {
		return err
	}
	fp := footprint.FromRegion(reg)
	meta := survey.Meta{}
	meta.Set("SURVEY", "Lanternfish Deep Redshift Survey (invented)")
	meta.Set("SOURCE", "filigree demo: "+regPath)
	hmap, err := footprint.Rasterize(fp, 256, 2, mapPath)
	if err != nil {
		return err
	}
	if err := footprint.WriteMap(mapPath, hmap, meta); err != nil {
		return err
	}
	moc, err := footprint.MOCFromMap(hmap, 0)
	if err != nil {
		return err
	}
	if err := footprint.WriteMOC(mocPath, moc, meta); err != nil {
		return err
	}
	say("footprint: %.1f deg² (%.1f deg² completeness-weighted), written as a region file, a HEALPix map (Nside 256) and a MOC (order 8)",
		fp.Area(), fp.EffectiveArea())
	made = append(made,
		demoFile{regPath, "footprint, filigree region format (exact shapes)"},
		demoFile{mapPath, "footprint, HEALPix completeness map (Nside 256, NESTED)"},
		demoFile{mocPath, "footprint, IVOA MOC 2.0 (coverage only)"})

	// 2. The mock, cached.
	mockPath := filepath.Join(dir, "lanternfish-mock.fits")
	keyPath := filepath.Join(dir, ".mock-args")
	mockArgs := append([]string{"mock", "--footprint", regPath}, demoMockArgs...)
	mockArgs = append(mockArgs, "-o", mockPath, "--summary", filepath.Join(dir, "mock-summary.json"))
	key := []byte(strings.Join(mockArgs, "\x00") + "\n" + version + "\n")
	cached := false
	if !rebuild {
		if old, err := os.ReadFile(keyPath); err == nil && bytes.Equal(old, key) {
			if _, err := os.Stat(mockPath); err == nil {
				cached = true
			}
		}
	}
	steps := [][]string{}
	if cached {
		say("using the cached mock %s (same parameters; --rebuild to make it again)", mockPath)
	} else {
		steps = append(steps, mockArgs)
	}
	weighted := filepath.Join(dir, "lanternfish-weighted.fits")
	randomsPath := filepath.Join(dir, "lanternfish-randoms.fits")
	webPath := filepath.Join(dir, "lanternfish-web.fits")
	fieldsPath := filepath.Join(dir, "lanternfish-fields.fits")
	groupsPath := filepath.Join(dir, "lanternfish-groups.fits")
	plotsDir := filepath.Join(dir, "plots")
	reportPath := filepath.Join(dir, "report.html")
	steps = append(steps,
		[]string{"footprint", "apply", mapPath, mockPath, "--weights", "-o", weighted, "--summary", filepath.Join(dir, "weights-summary.json")},
		[]string{"randoms", mocPath, "--like", mockPath, "-n", "500000", "--seed", "2026", "-o", randomsPath, "--summary", filepath.Join(dir, "randoms-summary.json")},
		// The Zel'dovich reconstruction keeps the demo within two minutes;
		// --recon transport (run's default) takes about six on it.
		[]string{"run", mockPath, "--footprint", regPath, "--bias", "1.3", "--recon", "zeldovich", "-o", webPath, "--fields", fieldsPath,
			"--groups", groupsPath, "--plots", plotsDir, "--summary", filepath.Join(dir, "run-summary.json")},
		[]string{"report", webPath, "--fields", fieldsPath, "--run-summary", filepath.Join(dir, "run-summary.json"),
			"--footprint", mapPath, "-o", reportPath},
	)
	for i, st := range steps {
		argv := append([]string{"filigree"}, st...)
		if a.quiet {
			argv = append(argv, "--quiet")
		}
		say("step %d/%d: %s", i+1, len(steps), survey.ShellQuote(argv))
		if st[0] == "mock" {
			os.Remove(keyPath)
		}
		if code := runMain(argv, a.stdout, a.stderr); code != exitOK {
			return fmt.Errorf("step %q failed (exit %d)", st[0], code)
		}
		if st[0] == "mock" {
			if err := survey.WriteAtomic(keyPath, func(w io.Writer) error { _, err := w.Write(key); return err }); err != nil {
				return err
			}
		}
	}
	made = append(made,
		demoFile{mockPath, "the mock survey: id, ra, dec, z and the truth (true_x.., true_lagr_x.., true_vpec_los, true_z_cosmo)"},
		demoFile{weighted, "the mock with comov_dist, cart_x/y/z, weight and edge_dist"},
		demoFile{randomsPath, "500000 randoms following the MOC footprint and the mock's n(z)"},
		demoFile{webPath, "every galaxy with dtfe_density, delta, tidal_l1..3, web_tidal, group_id, vpec_los, z_cosmo, edge_dist, flags"},
		demoFile{fieldsPath, "the gridded fields (smoothed δ, tidal eigenvalues, web code) as FITS cubes"},
		demoFile{groupsPath, "the friends-of-friends group catalogue (redshift space)"},
		demoFile{plotsDir, "figures: wedge, slice, sky, n(z), fractions, density (PNG)"},
		demoFile{reportPath, "the run report: one self-contained HTML page"})
	fmt.Fprintf(a.stdout, "demo finished in %.1f s; files in %s:\n", time.Since(t0).Seconds(), dir)
	for _, f := range made {
		fmt.Fprintf(a.stdout, "  %-48s %s\n", f.path, f.what)
	}
	fmt.Fprintf(a.stdout, "  %-48s %s\n", filepath.Join(dir, "*-summary.json"), "machine-readable summaries of each step")
	fmt.Fprintln(a.stdout, "Caution: the footprint, the survey and its galaxies are invented; they show the tool, not the sky.")
	fmt.Fprintln(a.stdout, "Caution: web labels depend on the smoothing scale, the threshold and the tracer density; galaxies near the edges and holes are flagged (see run-summary.json).")
	return nil
}
