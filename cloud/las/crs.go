package las

import (
	"encoding/binary"
	"fmt"
	"io"
	"math"
	"strings"
)

// geoKeyNames names the GeoTIFF keys a LAS CRS usually carries (GeoTIFF
// Format Specification 1.0, key ID summary; key numbers from memory).
var geoKeyNames = map[uint16]string{
	1024: "GTModelType",
	1025: "GTRasterType",
	1026: "GTCitation",
	2048: "GeographicType",
	2049: "GeogCitation",
	2050: "GeogGeodeticDatum",
	2052: "GeogLinearUnits",
	2054: "GeogAngularUnits",
	3072: "ProjectedCSType",
	3073: "PCSCitation",
	3074: "Projection",
	3075: "ProjCoordTrans",
	3076: "ProjLinearUnits",
	4096: "VerticalCSType",
	4097: "VerticalCitation",
	4098: "VerticalDatum",
	4099: "VerticalUnits",
}

// Tags of the GeoTIFF records LAS stores as LASF_Projection VLRs.
const (
	tagGeoKeyDirectory = 34735
	tagGeoDoubleParams = 34736
	tagGeoASCIIParams  = 34737
	keyProjLinearUnits = 3076
)

// readGeoKeys summarises the GeoKeyDirectory VLR, if any, into h.GeoKeys.
func (h *Header) readGeoKeys(r io.ReaderAt) error {
	var dir, doubles, ascii []byte
	for _, v := range h.VLRs {
		if v.UserID != "LASF_Projection" {
			continue
		}
		var dst *[]byte
		switch v.RecordID {
		case tagGeoKeyDirectory:
			dst = &dir
		case tagGeoDoubleParams:
			dst = &doubles
		case tagGeoASCIIParams:
			dst = &ascii
		default:
			continue
		}
		p, err := payload(r, v)
		if err != nil {
			return err
		}
		*dst = p
	}
	if dir != nil {
		h.GeoKeys, h.LinearUnit = geoKeys(dir, doubles, ascii)
	}
	if h.LinearUnit == 0 && h.WKT != "" {
		h.LinearUnit = wktLinearUnit(h.WKT)
	}
	return nil
}

// geoKeys renders a GeoKeyDirectory (an array of uint16: version, revision,
// minor revision, key count, then per key: id, tag location, count, value or
// offset; GeoTIFF 1.0 GeoKeyDirectoryTag, from memory) as "Name(id)=value; …". Values held in the
// double or ASCII parameter records are looked up there.
func geoKeys(dir, doubles, ascii []byte) (summary string, linearUnit int) {
	le := binary.LittleEndian
	u16 := func(i int) (uint16, bool) {
		if 2*i+2 > len(dir) {
			return 0, false
		}
		return le.Uint16(dir[2*i:]), true
	}
	n, ok := u16(3)
	if !ok {
		return "GeoKeyDirectory too short", 0
	}
	var sb strings.Builder
	for k := 0; k < int(n); k++ {
		id, ok1 := u16(4 + 4*k)
		loc, ok2 := u16(5 + 4*k)
		cnt, ok3 := u16(6 + 4*k)
		val, ok4 := u16(7 + 4*k)
		if !(ok1 && ok2 && ok3 && ok4) {
			sb.WriteString("; (directory truncated)")
			break
		}
		if k > 0 {
			sb.WriteString("; ")
		}
		name := geoKeyNames[id]
		if name == "" {
			name = "key"
		}
		var v string
		switch loc {
		case 0:
			v = fmt.Sprint(val)
			if id == keyProjLinearUnits {
				linearUnit = int(val)
			}
		case tagGeoDoubleParams:
			var ds []string
			for j := 0; j < int(cnt); j++ {
				o := 8 * (int(val) + j)
				if o+8 > len(doubles) {
					ds = append(ds, "?")
					break
				}
				ds = append(ds, fmt.Sprint(math.Float64frombits(le.Uint64(doubles[o:]))))
			}
			v = strings.Join(ds, ",")
		case tagGeoASCIIParams:
			lo, hi := int(val), int(val)+int(cnt)
			if hi > len(ascii) {
				hi = len(ascii)
			}
			if lo > hi {
				lo = hi
			}
			v = fmt.Sprintf("%q", strings.TrimRight(string(ascii[lo:hi]), "|\x00"))
		default:
			v = fmt.Sprintf("tag %d", loc)
		}
		fmt.Fprintf(&sb, "%s(%d)=%s", name, id, v)
	}
	return sb.String(), linearUnit
}

// wktLinearUnit guesses the EPSG code of the linear unit named in WKT text:
// 9003 where a UNIT names the US survey foot, 9002 where it names another
// foot, else 0. It is a heuristic for a warning, not a WKT parser.
func wktLinearUnit(wkt string) int {
	s := strings.ToLower(wkt)
	code := 0
	for {
		i := strings.Index(s, "unit[\"")
		if i < 0 {
			return code
		}
		s = s[i+6:]
		j := strings.IndexByte(s, '"')
		if j < 0 {
			return code
		}
		name := s[:j]
		switch {
		case strings.Contains(name, "foot") && (strings.Contains(name, "us") || strings.Contains(name, "survey")):
			return 9003
		case strings.Contains(name, "foot") || strings.Contains(name, "feet"):
			code = 9002
		}
	}
}
