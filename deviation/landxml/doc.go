// Package landxml reads triangulated surfaces (TINs) from LandXML 1.2 files
// — Surfaces/Surface/Definition with Pnts/P and Faces/F — and loads them as
// mesh design patches. Importing the package registers the "landxml" mesh
// loader of package deviation (deviation.LoadMesh("landxml", spec)).
//
// Coordinate order: a LandXML point's text is "northing easting elevation"
// (LandXML 1.2 schema, PointType: "a space delimited list of northing,
// easting and elevation"). This package maps it to the site frame as
//
//	x = easting (2nd value),  y = northing (1st value),  z = elevation (3rd),
//
// so that x is east and y north as everywhere in saddlecheck.
//
// Units: coordinates are converted to metres from the file's Units element:
// Metric linearUnit millimeter, centimeter, meter or kilometer; Imperial
// linearUnit foot (0.3048 m), USSurveyFoot (1200/3937 m) or inch. A file
// without Units uses the design file's unit (MeshSpec.UnitMetres). After
// conversion MeshSpec.Origin is added.
//
// Faces: each F lists three point ids. Faces flagged invisible (i="1") are
// not part of the surface and are skipped (and counted).
//
// Errors: *FormatError (byte offset and line of the XML) and
// *UnsupportedError (e.g. a grid surface).
//
// Sign convention: as package deviation/mesh (positive on the side chosen by
// the design's normal).
//
// References:
//   - LandXML-1.2 schema (LandXML.org, 2008): Units, Metric, Imperial,
//     Surfaces, Surface, Definition (surfType), Pnts, P, Faces, F.
//   - NIST SP 811 (2008) appendix B; Federal Register 85 FR 62698 (2020):
//     the international and US survey foot.
package landxml
