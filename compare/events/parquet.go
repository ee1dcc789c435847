package events

import (
	"bytes"
	"fmt"
	"os"

	"github.com/apache/arrow-go/v18/parquet"
	"github.com/apache/arrow-go/v18/parquet/file"

	"tandem/compare/table"
)

// parquetTable is an event table in a Parquet file, read with Apache
// arrow-go's column chunk readers, one row group and one batch at a time.
// Flat columns of physical type BOOLEAN, INT32, INT64, FLOAT or DOUBLE are
// usable; a null key or cut is an error, a null variable reads as NaN.
type parquetTable struct {
	name string
	open func() (*file.Reader, error)
	cols []ColumnInfo
	leaf map[string]int
}

// OpenParquet opens a Parquet event table and reads its schema.
func OpenParquet(path string) (Source, error) {
	if fi, err := os.Stat(path); err != nil {
		return nil, table.Errorf(path, 0, 0, "%v", unwrapPath(err))
	} else if fi.IsDir() {
		return nil, table.Errorf(path, 0, 0, "is a directory, not an event table")
	}
	return newParquet(path, func() (*file.Reader, error) { return file.OpenParquetFile(path, false) })
}

// NewParquet reads a Parquet event table from memory; name is used in
// messages.
func NewParquet(name string, data []byte) (Source, error) {
	return newParquet(name, func() (*file.Reader, error) { return file.NewParquetReader(bytes.NewReader(data)) })
}

func newParquet(name string, open func() (*file.Reader, error)) (t Source, err error) {
	defer recoverInto(name, &err)
	pt := &parquetTable{name: name, open: open, leaf: map[string]int{}}
	r, err := open()
	if err != nil {
		return nil, table.Errorf(name, 0, 0, "not a readable Parquet file: %v", err)
	}
	defer r.Close()
	sc := r.MetaData().Schema
	for i := 0; i < sc.NumColumns(); i++ {
		c := sc.Column(i)
		k := Other
		if c.MaxRepetitionLevel() == 0 {
			switch c.PhysicalType() {
			case parquet.Types.Boolean:
				k = Bool
			case parquet.Types.Int32, parquet.Types.Int64:
				k = Int
			case parquet.Types.Float, parquet.Types.Double:
				k = Float
			}
		}
		n := c.Path()
		if _, dup := pt.leaf[n]; dup {
			return nil, table.Errorf(name, 0, 0, "duplicate column %q", n)
		}
		pt.leaf[n] = i
		pt.cols = append(pt.cols, ColumnInfo{Name: n, Kind: k})
	}
	return pt, nil
}

// recoverInto turns a panic of the Parquet library on a corrupt file into
// an input error.
func recoverInto(name string, err *error) {
	if p := recover(); p != nil {
		*err = table.Errorf(name, 0, 0, "corrupt Parquet file: %v", p)
	}
}

func (t *parquetTable) Name() string                   { return t.name }
func (t *parquetTable) Unit() string                   { return "row" }
func (t *parquetTable) Columns() ([]ColumnInfo, error) { return t.cols, nil }

// colReader reads one column of a row group as float64 or int64 values
// with a null mask.
type colReader struct {
	cr     file.ColumnChunkReader
	maxDef int16
	def    []int16
	i64    []int64
	i32    []int32
	f64    []float64
	f32    []float32
	bools  []bool
	// out
	ints  []int64
	flts  []float64
	nulls []bool
}

// read fills ints (integers and booleans) or flts (floats) and nulls
// with the next n rows.
func (c *colReader) read(n int) error {
	c.ints, c.flts, c.nulls = c.ints[:0], c.flts[:0], c.nulls[:0]
	if cap(c.def) < n {
		c.def = make([]int16, n)
	}
	for got := 0; got < n; {
		want := int64(n - got)
		def := c.def[:n-got]
		var total int64
		var vals int
		var err error
		switch r := c.cr.(type) {
		case *file.Int64ColumnChunkReader:
			c.i64 = grow(c.i64, n)
			total, vals, err = r.ReadBatch(want, c.i64, def, nil)
			c.spread(total, def, func(v int) { c.ints = append(c.ints, c.i64[v]) }, func() { c.ints = append(c.ints, 0) })
		case *file.Int32ColumnChunkReader:
			c.i32 = grow(c.i32, n)
			total, vals, err = r.ReadBatch(want, c.i32, def, nil)
			c.spread(total, def, func(v int) { c.ints = append(c.ints, int64(c.i32[v])) }, func() { c.ints = append(c.ints, 0) })
		case *file.Float64ColumnChunkReader:
			c.f64 = grow(c.f64, n)
			total, vals, err = r.ReadBatch(want, c.f64, def, nil)
			c.spread(total, def, func(v int) { c.flts = append(c.flts, c.f64[v]) }, func() { c.flts = append(c.flts, nan) })
		case *file.Float32ColumnChunkReader:
			c.f32 = grow(c.f32, n)
			total, vals, err = r.ReadBatch(want, c.f32, def, nil)
			c.spread(total, def, func(v int) { c.flts = append(c.flts, float64(c.f32[v])) }, func() { c.flts = append(c.flts, nan) })
		case *file.BooleanColumnChunkReader:
			c.bools = grow(c.bools, n)
			total, vals, err = r.ReadBatch(want, c.bools, def, nil)
			c.spread(total, def, func(v int) { c.ints = append(c.ints, int64(b2i(c.bools[v]))) }, func() { c.ints = append(c.ints, 0) })
		default:
			return fmt.Errorf("column type %T is not supported", c.cr)
		}
		_ = vals
		if err != nil {
			return err
		}
		if total == 0 {
			return fmt.Errorf("column ends early: %d of %d rows", got, n)
		}
		got += int(total)
	}
	return nil
}

var nan = func() float64 { var z float64; return z / z }()

func b2i(b bool) int {
	if b {
		return 1
	}
	return 0
}

func grow[T any](s []T, n int) []T {
	if cap(s) < n {
		return make([]T, n)
	}
	return s[:n]
}

// spread walks the levels of one read: dense values for defined rows,
// nulls elsewhere (a required column has no levels to check).
func (c *colReader) spread(total int64, def []int16, val func(int), null func()) {
	v := 0
	for i := int64(0); i < total; i++ {
		if c.maxDef > 0 && def[i] < c.maxDef {
			null()
			c.nulls = append(c.nulls, true)
			continue
		}
		val(v)
		v++
		c.nulls = append(c.nulls, false)
	}
}

func (t *parquetTable) Scan(l Layout, fn func(*Batch) error) (err error) {
	defer recoverInto(t.name, &err)
	r, err := t.open()
	if err != nil {
		return table.Errorf(t.name, 0, 0, "not a readable Parquet file: %v", err)
	}
	defer r.Close()
	names := append(append(append([]string{}, l.Keys...), l.Vars...), l.Cuts...)
	nk, nv := len(l.Keys), len(l.Vars)
	readers := make([]colReader, len(names))
	b := &Batch{}
	var row int64
	for g := 0; g < r.NumRowGroups(); g++ {
		rg := r.RowGroup(g)
		left := rg.NumRows()
		for j, n := range names {
			cr, err := rg.Column(t.leaf[n])
			if err != nil {
				return table.Errorf(t.name, 0, 0, "row group %d, column %q: %v", g, n, err)
			}
			readers[j].cr = cr
			readers[j].maxDef = cr.Descriptor().MaxDefinitionLevel()
		}
		for left > 0 {
			n := int(min(left, BatchRows))
			for j := range readers {
				if err := readers[j].read(n); err != nil {
					return table.Errorf(t.name, 0, 0, "row group %d, column %q: %v", g, names[j], err)
				}
			}
			for i := 0; i < n; i++ {
				for j := 0; j < nk; j++ {
					c := &readers[j]
					if c.nulls[i] {
						return errAt(t, row+int64(i), "key %q is null", names[j])
					}
					if c.ints == nil || len(c.ints) != n {
						return errAt(t, row+int64(i), "key %q is not an integer column", names[j])
					}
					b.Keys = append(b.Keys, c.ints[i])
				}
				for j := nk; j < nk+nv; j++ {
					c := &readers[j]
					switch {
					case c.nulls[i]:
						b.Vals = append(b.Vals, nan)
					case len(c.flts) == n:
						b.Vals = append(b.Vals, c.flts[i])
					default:
						b.Vals = append(b.Vals, float64(c.ints[i]))
					}
				}
				var cuts uint64
				for j := nk + nv; j < len(names); j++ {
					c := &readers[j]
					if c.nulls[i] {
						return errAt(t, row+int64(i), "cut %q is null", names[j])
					}
					if len(c.ints) != n {
						return errAt(t, row+int64(i), "cut %q is not a boolean or integer column", names[j])
					}
					switch c.ints[i] {
					case 1:
						cuts |= 1 << (j - nk - nv)
					case 0:
					default:
						return errAt(t, row+int64(i), "cut %q: %d is not 0 or 1", names[j], c.ints[i])
					}
				}
				b.Cuts = append(b.Cuts, cuts)
				b.Pos = append(b.Pos, row+int64(i))
				b.N++
			}
			if err := fn(b); err != nil {
				return err
			}
			b.reset()
			row += int64(n)
			left -= int64(n)
		}
	}
	return nil
}
