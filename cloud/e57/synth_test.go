package e57

import (
	"cmp"
	"encoding/binary"
	"fmt"
	"math"
	"strings"
)

// synthField is one prototype field of a synthetic scan with its values:
// raw integers (before adding Min) for Integer and ScaledInteger, float
// values for Float.
type synthField struct {
	Field
	raw []uint64  // integer fields: raw − Min, packed in Bits bits
	val []float64 // Float fields
}

// synthScan is a scan to write: its XML extra elements (pose) and fields.
type synthScan struct {
	name   string
	pose   string // XML of the pose element, or ""
	n      int
	claim  int // recordCount written to the XML if not 0, else n
	fields []synthField
}

// pack returns the bytestream of f: Float values little-endian, integers
// bit-packed least significant bit first (ASTM E2807 bitpack codec).
func (f *synthField) pack() []byte {
	le := binary.LittleEndian
	if f.Type == "Float" {
		var b []byte
		for _, v := range f.val {
			if f.Single {
				b = le.AppendUint32(b, math.Float32bits(float32(v)))
			} else {
				b = le.AppendUint64(b, math.Float64bits(v))
			}
		}
		return b
	}
	nbits := len(f.raw) * f.Bits
	b := make([]byte, (nbits+7)/8)
	bit := 0
	for _, v := range f.raw {
		for k := 0; k < f.Bits; k++ {
			if v>>k&1 != 0 {
				b[(bit+k)/8] |= 1 << ((bit + k) % 8)
			}
		}
		bit += f.Bits
	}
	return b
}

func (f *synthField) xml() string {
	switch f.Type {
	case "Float":
		p := "double"
		if f.Single {
			p = "single"
		}
		return fmt.Sprintf(`<%s type="Float" precision="%s"/>`, f.Name, p)
	case "Integer":
		return fmt.Sprintf(`<%s type="Integer" minimum="%d" maximum="%d"/>`, f.Name, f.Min, f.Max)
	}
	return fmt.Sprintf(`<%s type="ScaledInteger" minimum="%d" maximum="%d" scale="%v" offset="%v"/>`, f.Name, f.Min, f.Max, f.Scale, f.Offset)
}

// buildE57 writes an E57 file: header, one CompressedVector section per
// scan whose data packets give each bytestream unequal, unaligned shares
// (so values straddle packets and pages), an index and an empty packet,
// then the XML; every 1020 logical bytes get their CRC-32C, big-endian.
func buildE57(scans []synthScan, chunk int) []byte {
	le := binary.LittleEndian
	logical := make([]byte, headerSize)
	var xml strings.Builder
	xml.WriteString(`<?xml version="1.0" encoding="UTF-8"?>` + "\n")
	xml.WriteString(`<e57Root type="Structure" xmlns="http://www.astm.org/COMMIT/E57/2010-e57-v1.0">`)
	xml.WriteString(`<formatName type="String"><![CDATA[ASTM E57 3D Imaging Data File]]></formatName>`)
	xml.WriteString(`<versionMajor type="Integer">1</versionMajor><versionMinor type="Integer"/>`)
	xml.WriteString(`<data3D type="Vector" allowHeterogeneousChildren="1">`)
	for _, s := range scans {
		for len(logical)%4 != 0 {
			logical = append(logical, 0)
		}
		start := len(logical)
		logical = append(logical, make([]byte, sectionHeaderSize)...)
		streams := make([][]byte, len(s.fields))
		for i := range s.fields {
			streams[i] = s.fields[i].pack()
		}
		for pk := 0; ; pk++ {
			if pk == 1 { // an empty packet and an index packet to skip
				logical = append(logical, packetEmpty, 0, 3, 0)
				idx := make([]byte, 32)
				idx[0] = packetIndex
				le.PutUint16(idx[2:], 31)
				logical = append(logical, idx...)
			}
			left := 0
			for _, st := range streams {
				left += len(st)
			}
			if left == 0 {
				break
			}
			ph := len(logical)
			logical = append(logical, packetData, 0, 0, 0)
			logical = le.AppendUint16(logical, uint16(len(streams)))
			lens := len(logical)
			logical = append(logical, make([]byte, 2*len(streams))...)
			for i := range streams {
				k := min(len(streams[i]), chunk+7*i+pk%3)
				le.PutUint16(logical[lens+2*i:], uint16(k))
				logical = append(logical, streams[i][:k]...)
				streams[i] = streams[i][k:]
			}
			for (len(logical)-ph)%4 != 0 {
				logical = append(logical, 0)
			}
			le.PutUint16(logical[ph+2:], uint16(len(logical)-ph-1))
		}
		h := logical[start:]
		h[0] = 1
		le.PutUint64(h[8:], uint64(len(logical)-start))
		le.PutUint64(h[16:], uint64(toPhysical(int64(start+sectionHeaderSize))))
		fmt.Fprintf(&xml, `<vectorChild type="Structure"><name type="String"><![CDATA[%s]]></name>%s`, s.name, s.pose)
		fmt.Fprintf(&xml, `<points type="CompressedVector" fileOffset="%d" recordCount="%d"><prototype type="Structure">`, toPhysical(int64(start)), cmp.Or(s.claim, s.n))
		for i := range s.fields {
			xml.WriteString(s.fields[i].xml())
		}
		xml.WriteString(`</prototype><codecs type="Vector" allowHeterogeneousChildren="1"/></points></vectorChild>`)
	}
	xml.WriteString(`</data3D><images2D type="Vector" allowHeterogeneousChildren="1"/></e57Root>`)
	xstart := len(logical)
	logical = append(logical, xml.String()...)
	for len(logical)%pageData != 0 {
		logical = append(logical, 0)
	}
	pages := len(logical) / pageData
	copy(logical, "ASTM-E57")
	le.PutUint32(logical[8:], 1)
	le.PutUint64(logical[16:], uint64(pages*pageSize))
	le.PutUint64(logical[24:], uint64(toPhysical(int64(xstart))))
	le.PutUint64(logical[32:], uint64(xml.Len()))
	le.PutUint64(logical[40:], pageSize)
	out := make([]byte, 0, pages*pageSize)
	for p := 0; p < pages; p++ {
		d := logical[p*pageData : (p+1)*pageData]
		out = append(out, d...)
		out = binary.BigEndian.AppendUint32(out, pageCRC(d))
	}
	return out
}

// recrc rewrites the checksum of every page of b after an edit.
func recrc(b []byte) []byte {
	for p := 0; p+pageSize <= len(b); p += pageSize {
		binary.BigEndian.PutUint32(b[p+pageData:], pageCRC(b[p:p+pageData]))
	}
	return b
}

// intField returns an Integer or ScaledInteger field with raw values
// f(i) − min for i in [0, n).
func intField(name, typ string, lo, hi int64, scale, offset float64, n int, f func(i int) int64) synthField {
	sf := synthField{Field: Field{Name: name, Type: typ, Min: lo, Max: hi, Scale: scale, Offset: offset}}
	for w := uint64(hi - lo); w > 0; w >>= 1 {
		sf.Bits++
	}
	for i := 0; i < n; i++ {
		sf.raw = append(sf.raw, uint64(f(i)-lo))
	}
	return sf
}

// floatField returns a Float field of values f(i).
func floatField(name string, single bool, n int, f func(i int) float64) synthField {
	sf := synthField{Field: Field{Name: name, Type: "Float", Single: single}}
	for i := 0; i < n; i++ {
		sf.val = append(sf.val, f(i))
	}
	return sf
}

// Synthetic scans with known truth (see TestSynthetic).
const (
	synthA = 1000
	synthB = 500
)

// poseZ90 turns 90° about +z (q = (cos 45°, 0, 0, sin 45°)) and moves by
// (100, 200, 5) m.
const poseZ90 = `<pose type="Structure"><rotation type="Structure"><w type="Float">0.70710678118654757</w><x type="Float"/><y type="Float"/><z type="Float">7.0710678118654757e-001</z></rotation><translation type="Structure"><x type="Float">100</x><y type="Float">2.0e+002</y><z type="Float">5</z></translation></pose>`

func synthXY(i int) (int64, int64) { return int64(i*37%8001 - 4000), int64(4000 - i*53%8001) }
func synthZ(i int) float64         { return float64(i)/7 - 50 }
func synthState(i int) int64 {
	switch {
	case i%97 == 5:
		return 2
	case i%89 == 3:
		return 1
	}
	return 0
}
func synthRange(i int) float64 { return 1 + float64(i)*0.01 }
func synthAz(i int) float64    { return -math.Pi + float64(i)*0.0123 }
func synthEl(i int) int64      { return int64(i*7%3001 - 1500) }

// synthScans returns scan A (cartesian, bit-packed 13-bit ScaledInteger x
// and y, double z, 2-bit invalid state, an ignored double field, single
// intensity, posed), scan B (spherical, 12-bit elevation, no pose) and an
// empty scan C.
func synthScans() []synthScan {
	a := synthScan{name: "A", pose: poseZ90, n: synthA, fields: []synthField{
		intField("cartesianX", "ScaledInteger", -4000, 4000, 0.001, 10, synthA, func(i int) int64 { x, _ := synthXY(i); return x }),
		intField("cartesianY", "ScaledInteger", -4000, 4000, 0.001, 10, synthA, func(i int) int64 { _, y := synthXY(i); return y }),
		floatField("cartesianZ", false, synthA, synthZ),
		floatField("timeStamp", false, synthA, func(i int) float64 { return float64(i) }),
		intField("cartesianInvalidState", "Integer", 0, 2, 1, 0, synthA, synthState),
		floatField("intensity", true, synthA, func(i int) float64 { return float64(i % 256) }),
	}}
	b := synthScan{name: "B", n: synthB, fields: []synthField{
		floatField("sphericalRange", false, synthB, synthRange),
		floatField("sphericalAzimuth", false, synthB, synthAz),
		intField("sphericalElevation", "ScaledInteger", -1500, 1500, 0.001, 0, synthB, synthEl),
	}}
	c := synthScan{name: "C", fields: []synthField{
		floatField("cartesianX", false, 0, nil), floatField("cartesianY", false, 0, nil), floatField("cartesianZ", false, 0, nil),
	}}
	return []synthScan{a, b, c}
}
