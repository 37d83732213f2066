package cloud

import (
	"io"
	"os"
	"path/filepath"
	"testing"
)

// TestStationColumn: a station/stn/setup column is read as the per-shot
// station id (text, kept beside id and code), and files without one leave
// Chunk.Station nil.
func TestStationColumn(t *testing.T) {
	tests := []struct {
		name, text string
		want       []string
	}{
		{"station", "Pt,Stn,E,N,Z,Code\nA1,S1,100.0,200.0,3.0,SOF\nA2,S2,101.0,201.0,3.1,\"SOF, edge\"\n", []string{"S1", "S2"}},
		{"setup after code", "id;n;e;z;code;setup\n7;200,5;100,5;3,25;SOF;TS-02\n", []string{"TS-02"}},
		{"none", "id,e,n,z\n1,1,2,3\n", nil},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			p := filepath.Join(t.TempDir(), "shots.csv")
			os.WriteFile(p, []byte(tc.text), 0o644)
			r, err := Open(p, Options{})
			if err != nil {
				t.Fatal(err)
			}
			defer r.Close()
			var c Chunk
			if err := r.Read(&c, 0); err != nil && err != io.EOF {
				t.Fatal(err)
			}
			if tc.want == nil {
				if c.Station != nil {
					t.Errorf("Station = %v, want nil", c.Station)
				}
				return
			}
			if len(c.Station) != len(tc.want) {
				t.Fatalf("Station = %v, want %v", c.Station, tc.want)
			}
			for i, w := range tc.want {
				if c.Station[i] != w || c.Reject[i] != "" {
					t.Errorf("record %d: station %q (reject %q), want %q", i, c.Station[i], c.Reject[i], w)
				}
			}
		})
	}
}
