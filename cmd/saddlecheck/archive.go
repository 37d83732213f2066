package main

import (
	"errors"
	"io"
)

func init() {
	register("archive", "keep survey epochs of a structure and compare them over time", runArchive)
}

// runArchive is a placeholder until the survey archive lands.
func runArchive(args []string, stdout, stderr io.Writer) error {
	return errors.New("the survey archive is not built yet")
}
