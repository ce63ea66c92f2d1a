package main

import (
	"io"
	"path/filepath"
	"strings"

	"github.com/spf13/pflag"

	"github.com/filigree-survey/filigree/internal/figures"
	"github.com/filigree-survey/filigree/survey"
)

func init() {
	var (
		inf figureInputs
		out string
	)
	register(&command{
		name:    "report",
		summary: "one self-contained HTML page of a run: parameters, cautions, numbers and figures",
		usage:   "OUTPUT -o report.html [--fields F] [--run-summary F] [--footprint F]",
		example: `  # The demo's report, with every figure, as one file to open or mail:
  filigree report lanternfish-web.fits --fields lanternfish-fields.fits \
      --run-summary run-summary.json --footprint footprint/lanternfish-map.fits -o report.html`,
		flags: func(a *app, fs *pflag.FlagSet) {
			fs.StringVarP(&out, "output", "o", "", "the HTML report to write")
			inf.register(fs)
		},
		run: func(a *app, fs *pflag.FlagSet, args []string) error {
			if len(args) != 1 {
				return usagef("report takes one run output table")
			}
			if out == "" {
				return usagef("report needs -o FILE.html")
			}
			if ext := strings.ToLower(filepath.Ext(out)); ext != ".html" && ext != ".htm" {
				return usagef("-o: the report is HTML; name it FILE.html, not %q", out)
			}
			in, err := inf.load(a, args[0])
			if err != nil {
				return err
			}
			opt := figures.ReportOptions{Generator: "filigree " + version, Notes: inf.missing()}
			a.progress.Start("drawing the report's figures", 0)
			err = survey.WriteAtomic(out, func(w io.Writer) error { return figures.WriteReport(w, in, opt) })
			a.progress.Finish()
			if err != nil {
				return err
			}
			a.note("wrote the report to %s", out)
			a.summary.Set("report", out)
			return nil
		},
	})
}
