package export

import (
	"bytes"
	"context"
	"encoding/json"
	"os"
	"path/filepath"
	"reflect"
	"testing"

	"github.com/apache/arrow-go/v18/arrow"
	"github.com/apache/arrow-go/v18/arrow/array"
	"github.com/apache/arrow-go/v18/arrow/memory"
	"github.com/apache/arrow-go/v18/parquet/file"
	"github.com/apache/arrow-go/v18/parquet/pqarrow"
)

// TestShardReadByArrow reads shards back with Apache Arrow's Go Parquet
// implementation (github.com/apache/arrow-go/v18/parquet, an implementation
// independent of parquet-go, which writes them), and checks the column types
// that Arrow-based loaders (pyarrow, polars, DuckDB through Arrow) will see and
// every value against what was written.
func TestShardReadByArrow(t *testing.T) {
	var rows []Row
	for _, f := range synthFiles(30) {
		rows = append(rows, f.rows...)
	}
	rows[0].Pitch[0], rows[0].Inst[0] = -1, 128 // no pitch, drums
	rows[1].Stretch, rows[1].Transpose = 1.1, -3
	for _, comp := range []string{CompressionZstd, CompressionSnappy, CompressionNone} {
		t.Run(comp, func(t *testing.T) {
			path := filepath.Join(t.TempDir(), "s.parquet")
			// Small row groups, so that the reader crosses group boundaries.
			if _, err := WriteShard(path, rows, ShardOptions{Compression: comp, RowGroupBytes: 2000,
				Metadata: map[string]string{MetaSchemaVersion: "1", MetaTimeUnit: "ms"}}); err != nil {
				t.Fatal(err)
			}
			got, meta := readWithArrow(t, path, 2)
			if meta[MetaTimeUnit] != "ms" || meta[MetaSchemaVersion] != "1" {
				t.Errorf("arrow-go reads metadata %v", meta)
			}
			if len(got) != len(rows) {
				t.Fatalf("arrow read %d rows, wrote %d", len(got), len(rows))
			}
			for i := range rows {
				if !reflect.DeepEqual(got[i], rows[i]) {
					t.Fatalf("row %d: arrow read\n%+v\nwrote\n%+v", i, got[i], rows[i])
				}
			}
		})
	}
}

// readWithArrow reads a shard with arrow-go, checking the Arrow schema and the
// key-value metadata on the way.
func readWithArrow(t *testing.T, path string, minGroups int) ([]Row, map[string]string) {
	t.Helper()
	f, err := os.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	pr, err := file.NewParquetReader(f)
	if err != nil {
		t.Fatalf("arrow-go cannot open the shard: %v", err)
	}
	defer pr.Close()
	if pr.NumRowGroups() < minGroups {
		t.Errorf("%d row groups; the test wants at least %d", pr.NumRowGroups(), minGroups)
	}
	meta := map[string]string{}
	for _, kv := range pr.MetaData().KeyValueMetadata() {
		if kv.Value != nil {
			meta[kv.Key] = *kv.Value
		}
	}
	fr, err := pqarrow.NewFileReader(pr, pqarrow.ArrowReadProperties{}, memory.DefaultAllocator)
	if err != nil {
		t.Fatal(err)
	}
	tbl, err := fr.ReadTable(context.Background())
	if err != nil {
		t.Fatalf("arrow-go cannot read the shard: %v", err)
	}
	defer tbl.Release()
	wantTypes := map[string]arrow.DataType{
		"tokens": arrow.ListOfNonNullable(arrow.PrimitiveTypes.Int32), "time": arrow.ListOfNonNullable(arrow.PrimitiveTypes.Int32),
		"pitch": arrow.ListOfNonNullable(arrow.PrimitiveTypes.Int16), "inst": arrow.ListOfNonNullable(arrow.PrimitiveTypes.Int16),
		"piece": arrow.BinaryTypes.String, "dataset": arrow.BinaryTypes.String, "source": arrow.BinaryTypes.String,
		"content_hash": arrow.BinaryTypes.String, "split": arrow.BinaryTypes.String,
		"window": arrow.PrimitiveTypes.Int32, "transpose": arrow.PrimitiveTypes.Int32, "stretch": arrow.PrimitiveTypes.Float32,
	}
	sc := tbl.Schema()
	if sc.NumFields() != len(wantTypes) {
		t.Errorf("arrow schema has %d columns, want %d:\n%s", sc.NumFields(), len(wantTypes), sc)
	}
	for name, want := range wantTypes {
		idx := sc.FieldIndices(name)
		if len(idx) != 1 {
			t.Errorf("arrow schema lacks column %q", name)
			continue
		}
		// Compare the type names: list<element: int32> whatever the element's nullability flag.
		if got := sc.Field(idx[0]).Type; got.ID() != want.ID() || (got.ID() == arrow.LIST && got.(*arrow.ListType).Elem().ID() != want.(*arrow.ListType).Elem().ID()) {
			t.Errorf("column %s: arrow type %s, want %s", name, got, want)
		}
	}
	out := make([]Row, tbl.NumRows())
	col := func(name string) *arrow.Chunked { return tbl.Column(sc.FieldIndices(name)[0]).Data() }
	forEach := func(name string, f func(i int, a arrow.Array, j int)) {
		i := 0
		for _, chunk := range col(name).Chunks() {
			for j := 0; j < chunk.Len(); j++ {
				f(i, chunk, j)
				i++
			}
		}
	}
	int32s := func(name string, set func(r *Row, v []int32)) {
		forEach(name, func(i int, a arrow.Array, j int) {
			l := a.(*array.List)
			s, e := l.ValueOffsets(j)
			vals := l.ListValues().(*array.Int32).Int32Values()[s:e]
			set(&out[i], append([]int32{}, vals...))
		})
	}
	int16s := func(name string, set func(r *Row, v []int16)) {
		forEach(name, func(i int, a arrow.Array, j int) {
			l := a.(*array.List)
			s, e := l.ValueOffsets(j)
			vals := l.ListValues().(*array.Int16).Int16Values()[s:e]
			set(&out[i], append([]int16{}, vals...))
		})
	}
	strs := func(name string, set func(r *Row, v string)) {
		forEach(name, func(i int, a arrow.Array, j int) { set(&out[i], a.(*array.String).Value(j)) })
	}
	int32s("tokens", func(r *Row, v []int32) { r.Tokens = v })
	int32s("time", func(r *Row, v []int32) { r.Time = v })
	int16s("pitch", func(r *Row, v []int16) { r.Pitch = v })
	int16s("inst", func(r *Row, v []int16) { r.Inst = v })
	strs("piece", func(r *Row, v string) { r.Piece = v })
	strs("dataset", func(r *Row, v string) { r.Dataset = v })
	strs("source", func(r *Row, v string) { r.Source = v })
	strs("content_hash", func(r *Row, v string) { r.ContentHash = v })
	strs("split", func(r *Row, v string) { r.Split = v })
	forEach("window", func(i int, a arrow.Array, j int) { out[i].Window = a.(*array.Int32).Value(j) })
	forEach("transpose", func(i int, a arrow.Array, j int) { out[i].Transpose = a.(*array.Int32).Value(j) })
	forEach("stretch", func(i int, a arrow.Array, j int) { out[i].Stretch = a.(*array.Float32).Value(j) })
	return out, meta
}

// TestRunShardsReadByArrow reads a shard of a real export with arrow-go and
// compares it with parquet-go's reading.
func TestRunShardsReadByArrow(t *testing.T) {
	dir := t.TempDir()
	m := runExport(t, dir, smallConfig(), Options{Workers: 2})
	sh := m.Shards[0]
	path := filepath.Join(dir, filepath.FromSlash(sh.Path))
	var want []Row
	if err := readRows(path, func(rows []Row) error {
		for _, r := range rows {
			r.Tokens, r.Time = append([]int32{}, r.Tokens...), append([]int32{}, r.Time...)
			r.Pitch, r.Inst = append([]int16{}, r.Pitch...), append([]int16{}, r.Inst...)
			want = append(want, r)
		}
		return nil
	}); err != nil {
		t.Fatal(err)
	}
	got, meta := readWithArrow(t, path, 1)
	if !reflect.DeepEqual(got, want) {
		t.Errorf("arrow-go and parquet-go read %s differently", sh.Path)
	}
	// The manifest file holds the JSON indented; the footer holds it compact.
	compact := func(raw []byte) string {
		var b bytes.Buffer
		if err := json.Compact(&b, raw); err != nil {
			t.Fatal(err)
		}
		return b.String()
	}
	wantMeta := map[string]string{MetaSchemaVersion: "1", MetaEncoding: m.Encoding, MetaVocabulary: compact(m.Vocabulary),
		MetaBuckets: compact(m.Buckets), MetaTimeUnit: m.TimeUnit, MetaConfigHash: m.ConfigHash, MetaSplit: sh.Split, MetaToolVersion: "test"}
	if !reflect.DeepEqual(meta, wantMeta) {
		t.Errorf("arrow-go reads the metadata\n%v\nwant\n%v", meta, wantMeta)
	}
}
