package main

// Formats and mesh kinds register themselves with the packages that use
// them (cloud.RegisterFormat, deviation.RegisterMeshLoader).
import (
	_ "saddlecheck/cloud/e57"
	_ "saddlecheck/cloud/las"
	_ "saddlecheck/deviation/landxml"
	_ "saddlecheck/deviation/mesh"
)
