//go:build !unix

package mapped

import "os"

func mapFile(*os.File, int64) []byte { return nil }

func unmapFile([]byte) error { return nil }
