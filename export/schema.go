package export

// Row is one training window, one Parquet row. The column names are part of the
// output format: training loaders select them by name.
//
// The list columns are Parquet LIST logical types (the three-level
// group/list/element layout), so Arrow-based readers see list<int32> and
// list<int16>. All four lists of a row have the same length: entry i of each
// describes token i.
//
// Before compression the token, pitch and instrument elements are dictionary
// encoded (RLE_DICTIONARY: a few hundred token ids, at most 130 pitch and
// instrument values) and the times delta encoded, both standard Parquet encodings
// that readers decode on their own. Stored plain, pitch and instrument took four
// bytes a token each, as Parquet keeps 16-bit integers in INT32.
type Row struct {
	Tokens []int32 `parquet:"tokens,list" parquet-element:",dict"` // vocabulary ids
	Time   []int32 `parquet:"time,list" parquet-element:",delta"`  // each token's time in the unit named by the time_unit metadata
	Pitch  []int16 `parquet:"pitch,list" parquet-element:",dict"`  // MIDI key 0-127, or -1 for tokens without a pitch
	Inst   []int16 `parquet:"inst,list" parquet-element:",dict"`   // -1 none, 0-127 General MIDI program, 128 drums

	Piece       string  `parquet:"piece,dict"`        // stable piece id: dataset, source and piece index within the file
	Dataset     string  `parquet:"dataset,dict"`      // dataset name of the input
	Source      string  `parquet:"source,dict"`       // path of the file within its source
	ContentHash string  `parquet:"content_hash,dict"` // transposition-invariant content hash of the piece
	Split       string  `parquet:"split,dict"`        // train, validation or test
	Window      int32   `parquet:"window"`            // index of the window within the piece and variant
	Transpose   int32   `parquet:"transpose"`         // semitones of the augmentation
	Stretch     float32 `parquet:"stretch"`           // tempo stretch factor of the augmentation, 1 for none
}

// SchemaVersion is the version of the row layout and metadata keys; it is bumped
// whenever a reader written for the old layout would misread the new one.
const SchemaVersion = 1

// Key-value metadata keys written into the footer of every shard. A reader needs
// nothing but one shard to interpret its rows.
const (
	MetaSchemaVersion = "relshard.schema_version" // SchemaVersion as decimal text
	MetaEncoding      = "relshard.encoding"       // name of the token encoding
	MetaVocabulary    = "relshard.vocabulary"     // the encoding's vocabulary, JSON
	MetaBuckets       = "relshard.buckets"        // relative-position bucket tables, JSON
	MetaTimeUnit      = "relshard.time_unit"      // unit of the time column
	MetaConfigHash    = "relshard.config_hash"    // hash of the resolved config
	MetaSplit         = "relshard.split"          // split of every row in the shard
	MetaToolVersion   = "relshard.tool_version"   // version of the tool that wrote the shard
)

// Split names, the values of the split column.
const (
	SplitTrain      = "train"
	SplitValidation = "validation"
	SplitTest       = "test"
)

// Splits lists the split names in manifest order.
var Splits = [...]string{SplitTrain, SplitValidation, SplitTest}

// payloadBytes estimates the uncompressed size of a row, the measure behind
// shard and row-group size targets: it depends only on the row, so cuts fall at
// the same rows whatever the worker count.
func (r *Row) payloadBytes() int64 {
	n := int64(len(r.Tokens))*4 + int64(len(r.Time))*4 + int64(len(r.Pitch))*2 + int64(len(r.Inst))*2
	n += int64(len(r.Piece) + len(r.Dataset) + len(r.Source) + len(r.ContentHash) + len(r.Split))
	return n + 12
}
