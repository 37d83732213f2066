package archive_test

import (
	"errors"
	"fmt"
	"os"
	"path/filepath"

	"saddlecheck/archive"
)

func Example() {
	dir, _ := os.MkdirTemp("", "archive-example-*")
	defer os.RemoveAll(dir)
	design := filepath.Join(dir, "canopy.yaml")
	shots := filepath.Join(dir, "shots-2026.csv")
	os.WriteFile(design, []byte("structure: invented canopy\n"), 0o644)
	os.WriteFile(shots, []byte("id,e,n,z\n1,1000.000,2000.000,10.002\n"), 0o644)

	a, err := archive.Init(filepath.Join(dir, "surveys"))
	if err != nil {
		fmt.Println(err)
		return
	}
	defer a.Close()
	st, _ := a.AddStructure("Tarn Road market canopy", design)
	e, _ := a.AddEpoch(archive.NewEpoch{Structure: st.Name, Date: "2026-04-18", PointsPath: shots,
		Datum: archive.DatumControl, RegistrationMM: 1.5, PointsFormat: "csv"})
	// The hash is the SHA-256 of the file (sha256sum gives the same).
	fmt.Println(e.ID, e.Date, e.Datum, e.PointsHash[:12])

	_, err = a.AddEpoch(archive.NewEpoch{Structure: st.Name, Date: "2026-05-01", PointsPath: shots})
	var dup *archive.DuplicateError
	fmt.Println(errors.As(err, &dup), dup.Epoch)
	// Output:
	// 1 2026-04-18 control d986c7e819ed
	// true 1
}
