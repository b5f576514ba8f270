// Command boxwright is a desktop workbench for building bounding-box
// datasets for object detectors. With no arguments it opens the window;
// with a sub-command it works headless (see boxwright help).
//
// This package only wires the command line (package cli) to the window
// (package gui); everything else lives in the packages below it.
package main

import (
	"os"

	_ "boxwright/app/locale" // before the GUI toolkit initialises: see the package comment

	"boxwright/app/cli"
	"boxwright/app/gui"
)

func main() {
	os.Exit(cli.Run(os.Args[1:], os.Stdout, os.Stderr, gui.Run))
}
