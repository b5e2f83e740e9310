package lake

import (
	"bufio"
	"bytes"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"net/url"
	"regexp"
	"slices"
	"sort"
	"strconv"
	"strings"

	"github.com/RoaringBitmap/roaring/v2"
	"github.com/RoaringBitmap/roaring/v2/roaring64"
	"github.com/parquet-go/parquet-go"

	"github.com/kgauge/kgauge/stream"
)

// deltaReaderFeatures are the Delta reader features kgauge reads exactly. Others are refused.
var deltaReaderFeatures = map[string]bool{
	"deletionVectors":          true, // applied as a row filter
	"v2Checkpoint":             true, // UUID-named checkpoints and sidecars are read
	"timestampNtz":             true, // such columns are never features
	"vacuumProtocolCheck":      true, // a writer-side rule
	"columnMapping":            true, // only with delta.columnMapping.mode = none (checked)
	"typeWidening":             true, // each file's own type is read and converted to float64
	"typeWidening-preview":     true,
	"variantType":              true, // nested columns are never features
	"variantType-preview":      true,
	"variantShredding":         true,
	"variantShredding-preview": true,
}

// Delta action structs: the protocol's documented fields that kgauge uses. The same structs read
// JSON commits and Parquet checkpoints (a checkpoint stores each action as a struct column).
type (
	deltaAction struct {
		Add                *deltaAdd      `json:"add" parquet:"add,optional"`
		Remove             *deltaRemove   `json:"remove" parquet:"remove,optional"`
		MetaData           *deltaMeta     `json:"metaData" parquet:"metaData,optional"`
		Protocol           *deltaProtocol `json:"protocol" parquet:"protocol,optional"`
		Sidecar            *deltaSidecar  `json:"sidecar" parquet:"sidecar,optional"`
		CheckpointMetadata *struct {
			Version int64 `json:"version" parquet:"version"`
		} `json:"checkpointMetadata" parquet:"checkpointMetadata,optional"`
	}
	deltaAdd struct {
		Path            string             `json:"path" parquet:"path"`
		PartitionValues map[string]*string `json:"partitionValues" parquet:"partitionValues"`
		Size            int64              `json:"size" parquet:"size"`
		DeletionVector  *deltaDV           `json:"deletionVector" parquet:"deletionVector,optional"`
	}
	deltaRemove struct {
		Path           string   `json:"path" parquet:"path"`
		DeletionVector *deltaDV `json:"deletionVector" parquet:"deletionVector,optional"`
	}
	deltaDV struct {
		StorageType    string `json:"storageType" parquet:"storageType"`
		PathOrInlineDv string `json:"pathOrInlineDv" parquet:"pathOrInlineDv"`
		Offset         *int32 `json:"offset" parquet:"offset,optional"`
		SizeInBytes    int32  `json:"sizeInBytes" parquet:"sizeInBytes"`
		Cardinality    int64  `json:"cardinality" parquet:"cardinality"`
	}
	deltaMeta struct {
		PartitionColumns []string          `json:"partitionColumns" parquet:"partitionColumns,list"`
		Configuration    map[string]string `json:"configuration" parquet:"configuration"`
	}
	deltaProtocol struct {
		MinReaderVersion int32    `json:"minReaderVersion" parquet:"minReaderVersion"`
		ReaderFeatures   []string `json:"readerFeatures" parquet:"readerFeatures,list"`
	}
	deltaSidecar struct {
		Path string `json:"path" parquet:"path"`
	}
)

// uniqueID is the deletion vector's id in a logical file's key (the protocol's derived field).
func (dv *deltaDV) uniqueID() string {
	if dv == nil {
		return ""
	}
	id := dv.StorageType + dv.PathOrInlineDv
	if dv.Offset != nil {
		id += "@" + strconv.Itoa(int(*dv.Offset))
	}
	return id
}

var (
	deltaCommitRe = regexp.MustCompile(`^(\d{20})\.json$`)
	deltaCkptRe   = regexp.MustCompile(`^(\d{20})\.checkpoint(?:\.(\d{10})\.(\d{10})|\.([0-9a-fA-F-]{36}))?\.(parquet|json)$`)
)

// deltaCheckpoint is one complete checkpoint found in the log.
type deltaCheckpoint struct {
	version int64
	files   []string // names in _delta_log, in part order
}

// deltaTable is the state of a Delta table at one version.
type deltaTable struct {
	root     loc
	version  int64
	adds     map[string]*deltaAdd // by path + "\x00" + deletion vector id
	meta     *deltaMeta
	protocol *deltaProtocol
}

// readDelta replays the log of the table at root up to the version at (nil: the latest).
func readDelta(root loc, at *int64) (*deltaTable, error) {
	version := int64(-1)
	if at != nil {
		version = *at
		if version < 0 {
			return nil, fmt.Errorf("delta table: version %d is negative", version)
		}
	}
	logDir := root.join("_delta_log")
	names, err := logDir.listDir()
	if err != nil {
		return nil, err
	}
	commits := map[int64]string{}
	parts := map[string]map[int]string{} // multi-part: "version/parts" → part → name
	var ckpts []deltaCheckpoint
	latest := int64(-1)
	for _, e := range names {
		if m := deltaCommitRe.FindStringSubmatch(e.rel); m != nil {
			v, _ := strconv.ParseInt(m[1], 10, 64)
			commits[v] = e.rel
			latest = max(latest, v)
			continue
		}
		m := deltaCkptRe.FindStringSubmatch(e.rel)
		if m == nil {
			continue
		}
		v, _ := strconv.ParseInt(m[1], 10, 64)
		latest = max(latest, v)
		switch {
		case m[2] != "":
			if m[5] != "parquet" {
				continue
			}
			part, _ := strconv.Atoi(m[2])
			key := m[1] + "/" + m[3]
			if parts[key] == nil {
				parts[key] = map[int]string{}
			}
			parts[key][part] = e.rel
		default:
			ckpts = append(ckpts, deltaCheckpoint{v, []string{e.rel}})
		}
	}
	for key, ps := range parts {
		vs, ns, _ := strings.Cut(key, "/")
		v, _ := strconv.ParseInt(vs, 10, 64)
		n, _ := strconv.Atoi(ns)
		if len(ps) != n { // a multi-part checkpoint with missing parts is ignored, as the protocol says
			continue
		}
		c := deltaCheckpoint{version: v}
		for i := 1; i <= n; i++ {
			name, ok := ps[i]
			if !ok {
				c.files = nil
				break
			}
			c.files = append(c.files, name)
		}
		if c.files != nil {
			ckpts = append(ckpts, c)
		}
	}
	if latest < 0 {
		return nil, errors.New("delta table: _delta_log holds no commit or checkpoint")
	}
	if version < 0 {
		version = latest
	} else if version > latest {
		return nil, fmt.Errorf("delta table: version %d does not exist (latest is %d)", version, latest)
	}
	// The newest checkpoint at or before the version; _last_checkpoint only names one of them, the
	// listing is the authority (a checkpoint it names but that is missing is not used).
	sort.Slice(ckpts, func(i, j int) bool {
		if ckpts[i].version != ckpts[j].version {
			return ckpts[i].version > ckpts[j].version
		}
		return len(ckpts[i].files) < len(ckpts[j].files) // prefer single-file checkpoints
	})
	t := &deltaTable{root: root, version: version, adds: map[string]*deltaAdd{}}
	from := int64(0)
	for _, c := range ckpts {
		if c.version > version {
			continue
		}
		if err := t.loadCheckpoint(logDir, c); err != nil {
			return nil, err
		}
		from = c.version + 1
		break
	}
	for v := from; v <= version; v++ {
		name, ok := commits[v]
		if !ok {
			if from == 0 {
				return nil, fmt.Errorf("delta table: commit %d is missing and no checkpoint covers it (the log was cleaned up before version %d?)", v, version)
			}
			return nil, fmt.Errorf("delta table: commit %d is missing from _delta_log", v)
		}
		acts, err := readJSONActions(logDir.join(name))
		if err != nil {
			return nil, err
		}
		t.apply(acts, false)
	}
	if t.protocol == nil || t.meta == nil {
		return nil, fmt.Errorf("delta table: no protocol or metaData action up to version %d", version)
	}
	if err := t.checkProtocol(); err != nil {
		return nil, err
	}
	return t, nil
}

// apply applies one commit's actions (or a checkpoint's, whose removes are tombstones of files
// that are gone already): removes first, then adds, since a commit's actions are unordered.
func (t *deltaTable) apply(acts []deltaAction, checkpoint bool) {
	for _, a := range acts {
		if a.Protocol != nil {
			t.protocol = a.Protocol
		}
		if a.MetaData != nil {
			t.meta = a.MetaData
		}
		if a.Remove != nil && !checkpoint {
			delete(t.adds, a.Remove.Path+"\x00"+a.Remove.DeletionVector.uniqueID())
		}
	}
	for _, a := range acts {
		if a.Add != nil {
			// The newest add of a path replaces an older one with another deletion vector only
			// together with a remove; a valid log never leaves two.
			t.adds[a.Add.Path+"\x00"+a.Add.DeletionVector.uniqueID()] = a.Add
		}
	}
}

// loadCheckpoint reads the actions of a checkpoint (and of its sidecars).
func (t *deltaTable) loadCheckpoint(logDir loc, c deltaCheckpoint) error {
	var acts []deltaAction
	for _, name := range c.files {
		var got []deltaAction
		var err error
		if strings.HasSuffix(name, ".json") {
			got, err = readJSONActions(logDir.join(name))
		} else {
			got, err = readParquetActions(logDir.join(name))
		}
		if err != nil {
			return err
		}
		acts = append(acts, got...)
	}
	for _, a := range acts {
		if a.Sidecar == nil {
			continue
		}
		p := a.Sidecar.Path
		var sc loc
		if strings.Contains(p, "/") {
			var err error
			if sc, err = resolveFile(logDir.join("_sidecars"), p, ""); err != nil {
				return fmt.Errorf("delta checkpoint %s: sidecar %q: %w", c.files[0], p, err)
			}
		} else {
			sc = logDir.join("_sidecars", p)
		}
		got, err := readParquetActions(sc)
		if err != nil {
			return err
		}
		acts = append(acts, got...)
	}
	t.apply(acts, true)
	return nil
}

// readJSONActions reads a newline-delimited JSON commit or checkpoint.
func readJSONActions(l loc) ([]deltaAction, error) {
	b, err := l.readAll()
	if err != nil {
		return nil, fmt.Errorf("delta log: %w", err)
	}
	var out []deltaAction
	sc := bufio.NewScanner(bytes.NewReader(b))
	sc.Buffer(nil, len(b)+1)
	line := 0
	for sc.Scan() {
		line++
		s := bytes.TrimSpace(sc.Bytes())
		if len(s) == 0 {
			continue
		}
		var a deltaAction
		if err := json.Unmarshal(s, &a); err != nil {
			return nil, fmt.Errorf("delta log %s: line %d: %w", l, line, err)
		}
		out = append(out, a)
	}
	return out, sc.Err()
}

// readParquetActions reads the actions of a Parquet checkpoint or sidecar.
func readParquetActions(l loc) (acts []deltaAction, err error) {
	defer func() {
		if p := recover(); p != nil {
			acts, err = nil, fmt.Errorf("delta checkpoint %s: unreadable: %v", l, p)
		}
	}()
	h, err := l.open()
	if err != nil {
		return nil, fmt.Errorf("delta checkpoint: %w", err)
	}
	defer h.Close()
	fi, err := h.Stat()
	if err != nil {
		return nil, fmt.Errorf("delta checkpoint: %w", err)
	}
	pf, err := parquet.OpenFile(h, fi.Size())
	if err != nil {
		return nil, fmt.Errorf("delta checkpoint %s: %w", l, err)
	}
	r := parquet.NewGenericReader[deltaAction](pf)
	defer r.Close()
	buf := make([]deltaAction, 256)
	for {
		n, err := r.Read(buf)
		acts = append(acts, buf[:n]...)
		if err == io.EOF {
			break
		}
		if err != nil {
			return nil, fmt.Errorf("delta checkpoint %s: %w", l, err)
		}
		clear(buf)
	}
	return acts, nil
}

// checkProtocol refuses a table whose reader protocol kgauge does not implement, naming the feature.
func (t *deltaTable) checkProtocol() error {
	p := t.protocol
	mode := t.meta.Configuration["delta.columnMapping.mode"]
	switch {
	case p.MinReaderVersion > 3:
		return fmt.Errorf("delta table: reader version %d is newer than kgauge reads (3)", p.MinReaderVersion)
	case p.MinReaderVersion == 2 || p.MinReaderVersion == 3 && contains(p.ReaderFeatures, "columnMapping"):
		if mode != "" && mode != "none" {
			return fmt.Errorf("delta table uses reader feature \"columnMapping\" (mode %q), which kgauge does not support; read its files with --as-files only if the physical column names are what you want", mode)
		}
	}
	if p.MinReaderVersion == 3 {
		for _, f := range p.ReaderFeatures {
			if !deltaReaderFeatures[f] {
				return fmt.Errorf("delta table uses reader feature %q, which kgauge does not support", f)
			}
		}
	}
	return nil
}

func contains(s []string, v string) bool {
	for _, x := range s {
		if x == v {
			return true
		}
	}
	return false
}

// files returns the live data files below sub (slash-separated, relative to the root; "" for the
// whole table) whose partition matches where, with their deletion vectors loaded.
func (t *deltaTable) files(sub string, where []stream.KeyValue) ([]stream.File, int64, error) {
	var out []stream.File
	var deleted int64
	keys := make([]string, 0, len(t.adds))
	for k := range t.adds {
		keys = append(keys, k)
	}
	sort.Strings(keys)
	for _, k := range keys {
		a := t.adds[k]
		rel, err := url.PathUnescape(a.Path)
		if err != nil {
			return nil, 0, fmt.Errorf("delta table: add path %q: %w", a.Path, err)
		}
		if !within(rel, sub) {
			continue
		}
		var part []stream.KeyValue
		for _, c := range t.meta.PartitionColumns {
			v := ""
			if p := a.PartitionValues[c]; p != nil {
				v = *p
			}
			part = append(part, stream.KeyValue{Key: c, Value: v})
		}
		if !stream.MatchWhere(part, where) {
			continue
		}
		l, err := resolveFile(t.root, rel, "")
		if err != nil {
			return nil, 0, err
		}
		f := stream.File{Path: l.p, Size: a.Size, Format: stream.Parquet, Partition: part}
		if a.DeletionVector != nil {
			if f.Deleted, err = t.loadDV(a.DeletionVector); err != nil {
				return nil, 0, fmt.Errorf("delta table: deletion vector of %s: %w", l, err)
			}
			deleted += int64(f.Deleted.GetCardinality())
		}
		out = append(out, f)
	}
	return out, deleted, nil
}

// Delta deletion vectors.

// The magic numbers of the two deletion vector formats.
const (
	dvMagicPortable = 1681511377
	dvMagicNative   = 1681511376
)

// loadDV reads a deletion vector: inline (Z85 in the log), or from a deletion vector file named by
// a UUID relative to the table root or by an absolute path.
func (t *deltaTable) loadDV(dv *deltaDV) (*roaring64.Bitmap, error) {
	var data []byte
	switch dv.StorageType {
	case "i":
		raw, err := z85Decode(dv.PathOrInlineDv)
		if err != nil {
			return nil, err
		}
		if int(dv.SizeInBytes) > len(raw) {
			return nil, fmt.Errorf("inline vector has %d bytes, its descriptor says %d", len(raw), dv.SizeInBytes)
		}
		data = raw[:dv.SizeInBytes]
	case "u", "p":
		var l loc
		if dv.StorageType == "u" {
			s := dv.PathOrInlineDv
			if len(s) < 20 {
				return nil, fmt.Errorf("relative path %q is shorter than a Z85 UUID", s)
			}
			u, err := z85Decode(s[len(s)-20:])
			if err != nil {
				return nil, err
			}
			name := fmt.Sprintf("deletion_vector_%x-%x-%x-%x-%x.bin", u[0:4], u[4:6], u[6:8], u[8:10], u[10:16])
			if prefix := s[:len(s)-20]; prefix != "" {
				l = t.root.join(prefix, name)
			} else {
				l = t.root.join(name)
			}
		} else {
			var err error
			if l, err = resolveFile(t.root, dv.PathOrInlineDv, ""); err != nil {
				return nil, err
			}
		}
		var off int64
		if dv.Offset != nil {
			off = int64(*dv.Offset)
		}
		var err error
		if data, err = readDVFile(l, off, dv.SizeInBytes); err != nil {
			return nil, err
		}
	default:
		return nil, fmt.Errorf("storage type %q is not one of u, i, p", dv.StorageType)
	}
	b, err := decodeDV(data)
	if err != nil {
		return nil, err
	}
	if c := b.GetCardinality(); int64(c) != dv.Cardinality {
		return nil, fmt.Errorf("vector holds %d rows, its descriptor says %d", c, dv.Cardinality)
	}
	return b, nil
}

// readDVFile reads one vector of a deletion vector file: at off a big-endian size, the data, and
// the CRC-32 of the data.
func readDVFile(l loc, off int64, size int32) ([]byte, error) {
	h, err := l.open()
	if err != nil {
		return nil, err
	}
	defer h.Close()
	fi, err := h.Stat()
	if err != nil {
		return nil, err
	}
	if size < 0 || off < 0 || off+8+int64(size) > fi.Size() {
		return nil, fmt.Errorf("%s: a %d-byte vector at offset %d does not fit in its %d bytes", l, size, off, fi.Size())
	}
	buf := make([]byte, 8+int(size))
	if _, err := h.ReadAt(buf, off); err != nil {
		return nil, fmt.Errorf("%s: %w", l, err)
	}
	if n := int32(be32(buf[:4])); n != size {
		return nil, fmt.Errorf("%s: vector at offset %d has %d bytes, its descriptor says %d", l, off, n, size)
	}
	data := buf[4 : 4+size]
	if crc, want := crc32IEEE(data), be32(buf[4+size:]); crc != want {
		return nil, fmt.Errorf("%s: vector at offset %d fails its CRC-32 check", l, off)
	}
	return data, nil
}

// decodeDV decodes a deletion vector. The protocol's text describes the portable format: the
// magic number 1681511377 (little-endian), then a 64-bit roaring bitmap in the portable format. Its
// own inline example (JSON Example 3) is in the native format of the reference implementation: the
// magic number 1681511376 and then, big-endian, the number of 32-bit bitmaps and each one's size
// before it, bitmap i holding the rows whose upper 32 bits are i. Both are read.
func decodeDV(data []byte) (b *roaring64.Bitmap, err error) {
	defer func() {
		if p := recover(); p != nil {
			b, err = nil, fmt.Errorf("deletion vector is corrupt: %v", p)
		}
	}()
	if len(data) < 12 {
		return nil, errors.New("not a deletion vector (too short)")
	}
	switch {
	case le32(data[:4]) == dvMagicPortable:
		body := data[4:]
		if n := le64(body[:8]); n > uint64(len(body))/4 { // each bucket takes at least its 4-byte key
			return nil, fmt.Errorf("deletion vector claims %d buckets in %d bytes", n, len(body))
		}
		b := roaring64.New()
		if _, err := b.ReadFrom(bytes.NewReader(body)); err != nil {
			return nil, fmt.Errorf("deletion vector: %w", err)
		}
		return b, nil
	case be32(data[:4]) == dvMagicNative:
		n := int(be32(data[4:8]))
		if n < 0 || n > len(data)/4 {
			return nil, fmt.Errorf("deletion vector claims %d bitmaps in %d bytes", n, len(data))
		}
		out := roaring64.New()
		rest := data[8:]
		for hi := 0; hi < n; hi++ {
			if len(rest) < 4 {
				return nil, errors.New("deletion vector is truncated")
			}
			size := int(be32(rest[:4]))
			if size < 0 || size > len(rest)-4 {
				return nil, fmt.Errorf("deletion vector bitmap %d claims %d bytes, %d remain", hi, size, len(rest)-4)
			}
			b := roaring.New()
			if _, err := b.FromBuffer(slices.Clone(rest[4 : 4+size])); err != nil {
				return nil, fmt.Errorf("deletion vector bitmap %d: %w", hi, err)
			}
			it := b.Iterator()
			for it.HasNext() {
				out.Add(uint64(hi)<<32 | uint64(it.Next()))
			}
			rest = rest[4+size:]
		}
		return out, nil
	}
	return nil, errors.New("not a deletion vector (magic number)")
}

const z85Chars = "0123456789abcdefghijklmnopqrstuvwxyzABCDEFGHIJKLMNOPQRSTUVWXYZ.-:+=^!/*?&<>()[]{}@%$#"

// z85Decode decodes ZeroMQ's Base85 (Z85): each 5 characters give 4 bytes, big-endian.
func z85Decode(s string) ([]byte, error) {
	if len(s)%5 != 0 {
		return nil, fmt.Errorf("Z85 text of %d characters is not a multiple of 5", len(s))
	}
	out := make([]byte, 0, len(s)/5*4)
	for i := 0; i < len(s); i += 5 {
		var v uint64
		for _, c := range []byte(s[i : i+5]) {
			d := strings.IndexByte(z85Chars, c)
			if d < 0 {
				return nil, fmt.Errorf("character %q is not Z85", c)
			}
			v = v*85 + uint64(d)
		}
		if v > 0xFFFFFFFF {
			return nil, fmt.Errorf("Z85 group %q overflows 32 bits", s[i:i+5])
		}
		out = append(out, byte(v>>24), byte(v>>16), byte(v>>8), byte(v))
	}
	return out, nil
}
