package las_test

import (
	"bytes"
	"encoding/binary"
	"fmt"
	"io"
	"math"

	"saddlecheck/cloud"
	"saddlecheck/cloud/las"
)

// ExampleNewReader reads a LAS 1.2 file of one point format 0 record held
// in memory: X = 47069244·0.01 + 0 m and so on.
func ExampleNewReader() {
	b := make([]byte, 227+20)
	le := binary.LittleEndian
	copy(b, "LASF")
	b[24], b[25] = 1, 2 // version 1.2
	le.PutUint16(b[94:], 227)
	le.PutUint32(b[96:], 227)
	le.PutUint16(b[105:], 20) // format 0, 20-byte records
	le.PutUint32(b[107:], 1)
	for i := 0; i < 3; i++ {
		le.PutUint64(b[131+8*i:], math.Float64bits(0.01))
	}
	le.PutUint32(b[227:], 47069244)
	le.PutUint32(b[231:], 460288890)
	le.PutUint32(b[235:], 1600)
	b[227+15] = 2 // classification: ground

	r, err := las.NewReader(bytes.NewReader(b), int64(len(b)), cloud.Options{})
	if err != nil {
		fmt.Println(err)
		return
	}
	var c cloud.Chunk
	for r.Read(&c, 0) != io.EOF {
		for i, p := range c.P {
			fmt.Printf("record %d: %.2f %.2f %.2f class %v\n", c.Line[i], p.X, p.Y, p.Z, c.Attr[3].Values[i])
		}
	}
	// Output:
	// record 1: 470692.44 4602888.90 16.00 class 2
}
