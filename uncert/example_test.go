package uncert_test

import (
	"fmt"
	"math"

	"gonum.org/v1/gonum/spatial/r3"
	"gopkg.in/yaml.v3"

	"saddlecheck/uncert"
)

// A total station 1″ / 1 mm + 1.5 ppm, the point 60 m away at zenith 80°
// and direction 37° (FIELD.md §3.3), measured against a design normal
// pointing straight up.
func ExampleSetup_NormalU() {
	m := uncert.Model{
		Instrument: uncert.Instrument{
			Kind: uncert.KindTotalStation, AngleArcsec: 1, DistanceMM: 1, DistancePPM: 1.5,
			Stations: []uncert.Station{{E: 1000, N: 2000, H: 50, InstrumentHeight: 1.6}},
		},
		ControlMM: 2,
	}
	s, err := m.Setup("")
	if err != nil {
		fmt.Println(err)
		return
	}
	p := uncert.FromPolar(s.Origin(), uncert.Polar{T: 37 * math.Pi / 180, Z: 80 * math.Pi / 180, S: 60})
	up := r3.Vec{Z: 1}
	fmt.Printf("instrument only: %.2f mm\n", math.Sqrt(s.Cov(p).Quad(up))*1e3)
	fmt.Printf("with 2 mm control: %.2f mm\n", s.NormalU(p, up)*1e3)
	// Output:
	// instrument only: 0.34 mm
	// with 2 mm control: 2.03 mm
}

// The FIELD.md §2 table: T = ±10 mm, u = 2 mm, guarded acceptance k = 2.
func ExampleDecide() {
	r := uncert.Rule{Name: uncert.RuleGuarded, K: 2}
	for _, d := range []float64{4, 6.5, 11, 15} {
		fmt.Printf("d = %4.1f mm: %-16v p_c = %.3f\n", d, uncert.Decide(d, 2, 10, r), uncert.ConformanceProb(d, 2, -10, 10))
	}
	// Output:
	// d =  4.0 mm: CONFORMS         p_c = 0.999
	// d =  6.5 mm: INCONCLUSIVE     p_c = 0.960
	// d = 11.0 mm: INCONCLUSIVE     p_c = 0.309
	// d = 15.0 mm: DOES NOT CONFORM p_c = 0.006
}

// What uncertainty would decide the inconclusive points of a ±10 mm
// tolerance surveyed with u = 2 mm.
func ExampleNeededU() {
	inconclusive := []float64{0.0065, 0.011, -0.0092, 0.0125, 0.0079, -0.0106} // metres
	u := uncert.NeededU(inconclusive, 0.010, 2, 0.5)
	share := uncert.DecidedShare(inconclusive, 0.010, 2, u)
	fmt.Printf("a survey with u ≤ %.2f mm would decide %.0f%% of these\n", u*1e3, 100*share)
	// Output:
	// a survey with u ≤ 1.05 mm would decide 50% of these
}

// Decoding the `uncertainty:` section of a design file; errors carry the
// file's line.
func ExampleDecodeModel() {
	src := `
uncertainty:
  instrument:
    kind: total-station
    angle_arcsec: 1
    distance_mm: 1
    distance_ppm: 1.5
    stations:
      - {id: S1, e: 1000, n: 2000, h: 50, instrument_height: 1.6}
  control_mm: 2
  decision: {rule: guarded, k: 2}
`
	var doc yaml.Node
	if err := yaml.Unmarshal([]byte(src), &doc); err != nil {
		fmt.Println(err)
		return
	}
	section := doc.Content[0].Content[1] // the value of `uncertainty:`
	m, err := uncert.DecodeModel(section)
	if err != nil {
		fmt.Println(err)
		return
	}
	s, _ := m.Setup("S1")
	fmt.Println(s.ID, m.Rule().Name, m.Rule().K)

	bad := `
uncertainty:
  instrument:
    kind: total-station
    angle_arcsec: -1
`
	_ = yaml.Unmarshal([]byte(bad), &doc)
	_, err = uncert.DecodeModel(doc.Content[0].Content[1])
	fmt.Println(err)
	// Output:
	// S1 guarded 2
	// line 5: uncertainty.instrument.angle_arcsec: must be a finite number ≥ 0, got -1
}
