package main

import (
	"fmt"
	"runtime"
	"runtime/debug"

	"github.com/spf13/pflag"
)

// version is the program version, recorded in every output's provenance.
// Release builds set it with -ldflags "-X main.version=…".
var version = "0.1.0-dev"

// fullVersion adds the VCS revision when the build recorded one.
func fullVersion() string {
	v := version
	if bi, ok := debug.ReadBuildInfo(); ok {
		for _, s := range bi.Settings {
			if s.Key == "vcs.revision" && len(s.Value) >= 12 {
				v += "+" + s.Value[:12]
			}
		}
	}
	return v
}

func init() {
	register(&command{
		name:    "version",
		summary: "print the program version",
		usage:   "",
		example: "  filigree version",
		run: func(a *app, fs *pflag.FlagSet, args []string) error {
			if len(args) > 0 {
				return usagef("version takes no arguments")
			}
			fmt.Fprintf(a.stdout, "filigree %s (%s, %s/%s)\n", fullVersion(), runtime.Version(), runtime.GOOS, runtime.GOARCH)
			return nil
		},
	})
}
