package objstore

import (
	"context"
	"errors"
	"fmt"
	"io"
	"io/fs"
	"path"
	"sync"
	"time"

	"gocloud.dev/blob"
)

// Read-ahead of a Reader. A read at a new position fetches what it asks for, rounded up to MinFetch
// bytes. A read that continues where a cached block ends (one column chunk read page after page,
// while the cursors of other columns read elsewhere in the object) fetches four times that block,
// up to the block size (by default DefaultBlockSize) and to an even share of the cache. A Parquet
// footer or a short projected column chunk therefore costs one small request and little beyond its
// own bytes, while a long column chunk is soon fetched in blocks large enough that the request
// latency of object storage (tens of milliseconds) is small next to the transfer time.
const (
	MinFetch         = 4 << 10
	DefaultBlockSize = 8 << 20
	// cacheBytes and cacheBlocks bound the blocks a Reader keeps (least recently used dropped first).
	cacheBytes  = 32 << 20
	cacheBlocks = 64
)

// Reader reads one object with ranged requests. It implements io.ReaderAt (safe for concurrent
// use), io.Reader and io.Seeker (one sequential position, not for concurrent use) and Stat.
type Reader struct {
	ctx  context.Context
	b    *blob.Bucket
	loc  Location
	size int64
	max  int64

	mu     sync.Mutex
	blocks []block // least recently used first
	held   int64   // bytes in blocks
	pos    int64   // Read and Seek position
	stats  Stats
	closed bool
	store  *Store // counts the requests too, when set
}

type block struct {
	off  int64
	data []byte
}

// Stats counts a Reader's requests.
type Stats struct {
	Requests int   // ranged GET requests
	Bytes    int64 // bytes fetched
}

func newReader(ctx context.Context, b *blob.Bucket, l Location, size, blockSize int64) *Reader {
	if blockSize <= 0 {
		blockSize = DefaultBlockSize
	}
	return &Reader{ctx: ctx, b: b, loc: l, size: size, max: max(blockSize, MinFetch)}
}

// Size returns the object's size in bytes.
func (r *Reader) Size() int64 { return r.size }

// Stats returns the requests made so far.
func (r *Reader) Stats() Stats {
	r.mu.Lock()
	defer r.mu.Unlock()
	return r.stats
}

// ReadAt reads len(p) bytes at off, from the cached blocks where it can.
func (r *Reader) ReadAt(p []byte, off int64) (int, error) {
	if off < 0 {
		return 0, fmt.Errorf("objstore: %s: negative offset %d", r.loc.Path(), off)
	}
	r.mu.Lock()
	defer r.mu.Unlock()
	if r.closed {
		return 0, fmt.Errorf("objstore: %s: %w", r.loc.Path(), fs.ErrClosed)
	}
	if off >= r.size {
		return 0, io.EOF
	}
	want := min(int64(len(p)), r.size-off)
	n := int64(0)
	for n < want {
		at := off + n
		bl, ok := r.cached(at)
		if !ok {
			size := max((want-n+MinFetch-1)/MinFetch*MinFetch, r.continuation(at))
			var err error
			if bl, err = r.fetch(at, size); err != nil {
				return int(n), err
			}
		}
		n += int64(copy(p[n:want], bl.data[at-bl.off:]))
	}
	if want < int64(len(p)) {
		return int(n), io.EOF
	}
	return int(n), nil
}

// cached returns the block holding byte at and marks it most recently used.
func (r *Reader) cached(at int64) (block, bool) {
	for i, bl := range r.blocks {
		if at >= bl.off && at < bl.off+int64(len(bl.data)) {
			r.blocks = append(append(r.blocks[:i:i], r.blocks[i+1:]...), bl)
			return bl, true
		}
	}
	return block{}, false
}

// continuation returns the read-ahead for a fetch at at: four times the cached block that ends at
// at, within the block size and an even share of the cache, or 0 when no block ends there.
func (r *Reader) continuation(at int64) int64 {
	for _, bl := range r.blocks {
		if bl.off+int64(len(bl.data)) == at {
			return min(4*int64(len(bl.data)), r.max, cacheBytes/int64(len(r.blocks)+1))
		}
	}
	return 0
}

// fetch reads n bytes (fewer at the end of the object) at off with one ranged request.
func (r *Reader) fetch(off, n int64) (block, error) {
	n = min(n, r.size-off)
	var data []byte
	var err error
	for attempt := range 3 {
		if data, err = r.get(off, n); err == nil || errors.Is(err, context.Canceled) {
			break
		}
		time.Sleep(time.Duration(100<<attempt) * time.Millisecond)
	}
	if err != nil {
		return block{}, pathError("read", r.loc.Path(), fmt.Errorf("%d bytes at %d: %w", n, off, err))
	}
	r.stats.Requests++
	r.stats.Bytes += n
	if r.store != nil {
		r.store.requests.Add(1)
		r.store.bytes.Add(n)
	}
	bl := block{off: off, data: data}
	for len(r.blocks) > 0 && (len(r.blocks) == cacheBlocks || r.held+n > cacheBytes) {
		r.held -= int64(len(r.blocks[0].data))
		r.blocks = r.blocks[1:]
	}
	r.blocks = append(r.blocks, bl)
	r.held += n
	return bl, nil
}

func (r *Reader) get(off, n int64) ([]byte, error) {
	rr, err := r.b.NewRangeReader(r.ctx, r.loc.Key, off, n, nil)
	if err != nil {
		return nil, err
	}
	defer rr.Close()
	data := make([]byte, n)
	if _, err := io.ReadFull(rr, data); err != nil {
		return nil, err
	}
	return data, nil
}

// Read reads from the sequential position.
func (r *Reader) Read(p []byte) (int, error) {
	r.mu.Lock()
	pos := r.pos
	r.mu.Unlock()
	n, err := r.ReadAt(p, pos)
	r.mu.Lock()
	r.pos = pos + int64(n)
	r.mu.Unlock()
	if err == io.EOF && n > 0 {
		err = nil
	}
	return n, err
}

// Seek sets the sequential position.
func (r *Reader) Seek(offset int64, whence int) (int64, error) {
	r.mu.Lock()
	defer r.mu.Unlock()
	switch whence {
	case io.SeekStart:
	case io.SeekCurrent:
		offset += r.pos
	case io.SeekEnd:
		offset += r.size
	default:
		return 0, fmt.Errorf("objstore: %s: bad whence %d", r.loc.Path(), whence)
	}
	if offset < 0 {
		return 0, fmt.Errorf("objstore: %s: seek to negative offset %d", r.loc.Path(), offset)
	}
	r.pos = offset
	return offset, nil
}

// Stat describes the object as a file.
func (r *Reader) Stat() (fs.FileInfo, error) { return objectInfo{r}, nil }

// Close drops the cached blocks; the bucket stays open for other readers.
func (r *Reader) Close() error {
	r.mu.Lock()
	defer r.mu.Unlock()
	r.closed, r.blocks, r.held = true, nil, 0
	return nil
}

type objectInfo struct{ r *Reader }

func (o objectInfo) Name() string       { return path.Base(o.r.loc.Key) }
func (o objectInfo) Size() int64        { return o.r.size }
func (o objectInfo) Mode() fs.FileMode  { return 0o444 }
func (o objectInfo) ModTime() time.Time { return time.Time{} }
func (o objectInfo) IsDir() bool        { return false }
func (o objectInfo) Sys() any           { return nil }
