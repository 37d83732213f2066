// Package geojson writes the points and patch outlines of a check as a
// GeoJSON FeatureCollection (RFC 7946) for map viewers: one Point feature
// per measured point (id, deviation in millimetres, tolerance band, patch,
// status) and one Polygon feature per patch outline; above a size limit the
// points are folded into square map cells with their count and the mean,
// minimum and maximum deviation, so that memory and file size stay bounded.
//
// Coordinates: positions are [x, y, z] = [easting, northing, elevation] in
// metres of the site grid, in that order (RFC 7946 §3.1.1 puts the
// easting-like longitude first). RFC 7946 §4 requires WGS 84 longitude and
// latitude; this package does no coordinate transformation, so the output
// is a local-grid GeoJSON and says so in the collection's "metadata"
// foreign member (RFC 7946 §6.1), under "crs", together with the units and
// the mode (points or cells). RFC 7946 §7.1 forbids a "properties" member
// on a FeatureCollection, hence the name. Do not overlay the output on web
// maps without transforming it first; no EPSG transformation is done.
//
// Polygons: rings are closed (first position repeated last) and oriented
// by the right-hand rule of RFC 7946 §3.1.6: exterior rings
// counter-clockwise, holes clockwise, seen from above (+z) with x east and
// y north.
//
// Units and sign: deviations in millimetres, positive on the design's
// declared normal side, as in package deviation.
//
// The file is written under a temporary name and renamed on Close.
//
// References:
//   - RFC 7946, The GeoJSON Format (2016): §3.1 geometry, §3.1.6 polygon
//     ring orientation, §3.2 Feature, §3.3 FeatureCollection, §4 CRS, §6.1
//     foreign members, §7.1 members a FeatureCollection must not have,
//     §11.2 coordinate precision.
package geojson
