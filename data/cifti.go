package data

import (
	"bytes"
	"encoding/binary"
	"encoding/xml"
	"fmt"
	"math"
	"strconv"
	"strings"
)

// NIfTI-2 header layout (the NIfTI-2 format, nifti2.h): a 540-byte header,
// then a 4-byte extender whose first byte is non-zero when extensions
// follow, each extension an (esize, ecode) pair of int32 then esize − 8
// bytes; the data start at vox_offset.
const (
	nifti2HeaderSize = 540
	nifti2Extender   = 4
	ciftiExtCode     = 32 // NIFTI_ECODE_CIFTI
)

// nifti2Datatypes maps the NIfTI datatype codes skein reads to their
// element size in bytes.
var nifti2Datatypes = map[int16]int{
	2:    1, // uint8
	4:    2, // int16
	8:    4, // int32
	16:   4, // float32
	64:   8, // float64
	256:  1, // int8
	512:  2, // uint16
	768:  4, // uint32
	1024: 8, // int64
	1280: 8, // uint64
}

// ciftiXML is the part of the CIFTI-2 XML (CIFTI-2 specification,
// "Matrix" and "MatrixIndicesMap" elements) that skein reads.
type ciftiXML struct {
	XMLName xml.Name `xml:"CIFTI"`
	Version string   `xml:"Version,attr"`
	Maps    []struct {
		Dims    string `xml:"AppliesToMatrixDimension,attr"`
		Type    string `xml:"IndicesMapToDataType,attr"`
		NSeries string `xml:"NumberOfSeriesPoints,attr"`
		Parcels []struct {
			Name string `xml:"Name,attr"`
		} `xml:"Parcel"`
	} `xml:"Matrix>MatrixIndicesMap"`
}

// decodeCIFTI decodes a CIFTI-2 parcellated file: a NIfTI-2 single file
// (magic "n+2") whose extension of code 32 holds the CIFTI XML, with the
// 2-D matrix in the NIfTI dimensions 5 and 6 (CIFTI matrix dimensions 0
// and 1; dimension 0, the rows, varies fastest in the file). It returns the
// rows × columns array in C order with the parcel names of the columns:
// p × p for a .pconn.nii (both dimensions parcels, the same list), T × p
// for a .ptseries.nii (rows a series, columns parcels). Integer and float
// datatypes are read; scl_slope and scl_inter are applied when the slope
// is neither 0 nor 1 or the intercept is not 0.
func decodeCIFTI(path string, raw []byte) (*array, error) {
	bad := func(format string, args ...any) error {
		return &FileError{Path: path, Err: fmt.Errorf(format, args...)}
	}
	if len(raw) < nifti2HeaderSize {
		return nil, bad("NIfTI-2 header truncated: file has %d bytes, the header needs %d", len(raw), nifti2HeaderSize)
	}
	var order binary.ByteOrder
	switch {
	case binary.LittleEndian.Uint32(raw) == nifti2HeaderSize:
		order = binary.LittleEndian
	case binary.BigEndian.Uint32(raw) == nifti2HeaderSize:
		order = binary.BigEndian
	default:
		return nil, bad("header offset 0 (sizeof_hdr): found %d, expected 540 for NIfTI-2 (a NIfTI-1 file has 348 and cannot hold CIFTI-2)", binary.LittleEndian.Uint32(raw))
	}
	if magic := raw[4:12]; !bytes.Equal(magic, []byte("n+2\x00\r\n\x1a\n")) {
		return nil, bad("header offset 4 (magic): found %q, expected \"n+2\\x00\\r\\n\\x1a\\n\" (a single NIfTI-2 file)", magic)
	}
	datatype := int16(order.Uint16(raw[12:]))
	esize, ok := nifti2Datatypes[datatype]
	if !ok {
		return nil, bad("header offset 12 (datatype): code %d is not read; expected an integer or float32/float64 type", datatype)
	}
	var dim [8]int64
	for k := range dim {
		dim[k] = int64(order.Uint64(raw[16+8*k:]))
	}
	if dim[0] != 6 {
		return nil, bad("header offset 16 (dim[0]): %d dimensions, expected 6 for a 2-D CIFTI-2 matrix", dim[0])
	}
	for k := 1; k <= 4; k++ {
		if dim[k] != 1 {
			return nil, bad("header offset %d (dim[%d]): found %d, expected 1 in a CIFTI-2 file", 16+8*k, k, dim[k])
		}
	}
	rows, cols := dim[5], dim[6]
	if rows <= 0 || cols <= 0 || rows > math.MaxInt32 || cols > math.MaxInt32 {
		return nil, bad("header offset 56 (dim[5], dim[6]): matrix of %d × %d", rows, cols)
	}
	voxOffset := int64(order.Uint64(raw[168:]))
	slope := math.Float64frombits(order.Uint64(raw[176:]))
	inter := math.Float64frombits(order.Uint64(raw[184:]))

	// Extensions, from byte 540 to vox_offset.
	if len(raw) < nifti2HeaderSize+nifti2Extender {
		return nil, bad("file ends at byte %d, before the extension flag at 540", len(raw))
	}
	if raw[nifti2HeaderSize] == 0 {
		return nil, bad("byte 540 (extension flag) is 0: no extensions, so no CIFTI XML; not a CIFTI-2 file")
	}
	if voxOffset < nifti2HeaderSize+nifti2Extender || voxOffset > int64(len(raw)) {
		return nil, bad("header offset 168 (vox_offset): %d lies outside the file's %d bytes", voxOffset, len(raw))
	}
	var xmlText []byte
	for off := int64(nifti2HeaderSize + nifti2Extender); off+8 <= voxOffset; {
		size := int64(int32(order.Uint32(raw[off:])))
		code := int32(order.Uint32(raw[off+4:]))
		if size < 8 || off+size > voxOffset {
			return nil, bad("extension at byte %d: size %d does not fit before the data at byte %d", off, size, voxOffset)
		}
		if code == ciftiExtCode {
			xmlText = raw[off+8 : off+size]
			break
		}
		off += size
	}
	if xmlText == nil {
		return nil, bad("no CIFTI extension (code 32) between bytes 544 and %d", voxOffset)
	}
	var doc ciftiXML
	if err := xml.Unmarshal(bytes.TrimRight(xmlText, "\x00"), &doc); err != nil {
		return nil, bad("CIFTI XML (extension at byte 544): %w", err)
	}
	if !strings.HasPrefix(doc.Version, "2") {
		return nil, bad("CIFTI XML: Version %q; expected CIFTI-2 (\"2\")", doc.Version)
	}

	// Which map applies to which matrix dimension.
	var types [2]string
	var parcels [2][]string
	var nseries [2]string
	for _, m := range doc.Maps {
		for d := range strings.SplitSeq(m.Dims, ",") {
			k, err := strconv.Atoi(strings.TrimSpace(d))
			if err != nil || k < 0 || k > 1 {
				return nil, bad("CIFTI XML: MatrixIndicesMap AppliesToMatrixDimension %q; expected 0, 1 or \"0,1\"", m.Dims)
			}
			types[k] = m.Type
			nseries[k] = m.NSeries
			parcels[k] = nil
			for _, p := range m.Parcels {
				parcels[k] = append(parcels[k], p.Name)
			}
		}
	}
	const parcelType, seriesType = "CIFTI_INDEX_TYPE_PARCELS", "CIFTI_INDEX_TYPE_SERIES"
	if types[1] != parcelType {
		found := "none"
		if types[1] != "" {
			found = types[1]
		}
		return nil, bad("CIFTI XML: no parcels map (%s) for matrix dimension 1, the columns (found %s); expected a parcellated file (.pconn.nii or .ptseries.nii)", parcelType, found)
	}
	names := parcels[1]
	if int64(len(names)) != cols {
		return nil, bad("CIFTI XML: the parcels map names %d parcels, but the header's dim[6] is %d", len(names), cols)
	}
	switch types[0] {
	case parcelType:
		if int64(len(parcels[0])) != rows {
			return nil, bad("CIFTI XML: the row parcels map names %d parcels, but the header's dim[5] is %d", len(parcels[0]), rows)
		}
		for k := range parcels[0] {
			if k < len(names) && parcels[0][k] != names[k] {
				return nil, bad("CIFTI XML: row parcel %d is %q but column parcel %d is %q; expected one list of parcels for both dimensions", k+1, parcels[0][k], k+1, names[k])
			}
		}
	case seriesType:
		if n, err := strconv.ParseInt(nseries[0], 10, 64); err != nil || n != rows {
			return nil, bad("CIFTI XML: NumberOfSeriesPoints %q differs from the header's dim[5] %d", nseries[0], rows)
		}
	default:
		return nil, bad("CIFTI XML: matrix dimension 0 maps to %q; expected %s or %s", types[0], parcelType, seriesType)
	}

	n := rows * cols
	if n > (int64(len(raw))-voxOffset)/int64(esize) {
		return nil, bad("data truncated: %d × %d values of %d bytes need %d bytes from byte %d, the file has %d", rows, cols, esize, n*int64(esize), voxOffset, int64(len(raw))-voxOffset)
	}
	body := raw[voxOffset:]
	scale := !(slope == 0 || slope == 1) || inter != 0
	if math.IsNaN(slope) || math.IsNaN(inter) {
		scale = false
	}
	r, c := int(rows), int(cols)
	data := make([]float64, r*c)
	for j := range c {
		for i := range r {
			k := j*r + i // dimension 0 (rows) fastest
			v := niftiValue(body[k*esize:], datatype, order)
			if scale {
				v = v*slope + inter
			}
			data[i*c+j] = v
		}
	}
	return &array{shape: []int{r, c}, data: data, names: names}, nil
}

// niftiValue decodes the element of NIfTI datatype code dt at the start of b.
func niftiValue(b []byte, dt int16, order binary.ByteOrder) float64 {
	switch dt {
	case 2:
		return float64(b[0])
	case 256:
		return float64(int8(b[0]))
	case 4:
		return float64(int16(order.Uint16(b)))
	case 512:
		return float64(order.Uint16(b))
	case 8:
		return float64(int32(order.Uint32(b)))
	case 768:
		return float64(order.Uint32(b))
	case 16:
		return float64(math.Float32frombits(order.Uint32(b)))
	case 1024:
		return float64(int64(order.Uint64(b)))
	case 1280:
		return float64(order.Uint64(b))
	default: // 64
		return math.Float64frombits(order.Uint64(b))
	}
}
