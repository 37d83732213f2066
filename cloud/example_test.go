package cloud_test

import (
	"fmt"
	"os"
	"path/filepath"

	"saddlecheck/cloud"
)

// A total-station export with northing before easting, a decimal comma and
// one bad shot: the columns are mapped by name and the bad row is kept with
// its reason.
func ExampleScan() {
	dir, err := os.MkdirTemp("", "cloud-example")
	if err != nil {
		fmt.Println(err)
		return
	}
	defer os.RemoveAll(dir)
	path := filepath.Join(dir, "shots.csv")
	data := "Pt;N;E;Z;Code\n" +
		"1;5000123,789;500123,456;101,234;SRF\n" +
		"2;5000124,789;500124,456;101,250;SRF\n" +
		"3;5000125,789;abc;101,266;SRF\n"
	if err := os.WriteFile(path, []byte(data), 0o644); err != nil {
		fmt.Println(err)
		return
	}
	r, err := cloud.Open(path, cloud.Options{})
	if err != nil {
		fmt.Println(err)
		return
	}
	defer r.Close()
	s, err := cloud.Scan(r)
	if err != nil {
		fmt.Println(err)
		return
	}
	fmt.Println(s.Info.Format, s.Info.Columns)
	fmt.Printf("%d records, %d rejected\n", s.Count, s.Rejected)
	fmt.Printf("E %.3f..%.3f  N %.3f..%.3f\n", s.Min.X, s.Max.X, s.Min.Y, s.Max.Y)
	// Output:
	// csv [id n e z code]
	// 3 records, 1 rejected
	// E 500123.456..500124.456  N 5000123.789..5000124.789
}
