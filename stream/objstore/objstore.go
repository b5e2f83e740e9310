package objstore

import (
	"context"
	"encoding/hex"
	"errors"
	"fmt"
	"io"
	"io/fs"
	"path"
	"regexp"
	"sort"
	"strings"
	"sync"
	"sync/atomic"

	"github.com/kgauge/kgauge/stream"
	"gocloud.dev/blob"
	"gocloud.dev/gcerrors"
)

func init() { stream.Remote = Default }

// schemes are the URL schemes treated as object storage even when their driver is not linked, so
// that such a URL gets an error saying how to build with it rather than "no such file".
var schemes = map[string]string{"s3": "", "gs": "kgauge_gcs", "azblob": "kgauge_azblob"}

// Location is a parsed object URL: scheme://bucket/key?query.
type Location struct {
	Scheme, Bucket, Key string
	Query               string // bucket settings for the driver (region, endpoint, …); not part of Path
}

// Path returns the canonical URL of the object, without the query.
func (l Location) Path() string { return l.Scheme + "://" + l.Bucket + "/" + l.Key }

// bucketURL is the URL gocloud.dev opens the bucket by.
func (l Location) bucketURL() string {
	u := l.Scheme + "://" + l.Bucket
	if l.Query != "" {
		u += "?" + l.Query
	}
	return u
}

// queryStart finds a "?name=" that begins a URL query; a "?" elsewhere is a glob character.
var queryStart = regexp.MustCompile(`\?[A-Za-z_][A-Za-z0-9_]*=`)

// IsURL reports whether s names object storage (a scheme such as s3:// followed by a bucket).
func IsURL(s string) bool {
	scheme, rest, ok := strings.Cut(s, "://")
	if !ok || rest == "" {
		return false
	}
	if _, known := schemes[scheme]; known {
		return true
	}
	return blob.DefaultURLMux().ValidBucketScheme(scheme)
}

// Parse splits an object URL. Keys are taken as written: S3 and its kin store hive escapes such as
// region=s%C3%BCd literally.
func Parse(s string) (Location, error) {
	if !IsURL(s) {
		return Location{}, fmt.Errorf("objstore: %s: not an object storage URL", s)
	}
	var l Location
	var rest string
	l.Scheme, rest, _ = strings.Cut(s, "://")
	if m := queryStart.FindStringIndex(rest); m != nil {
		rest, l.Query = rest[:m[0]], rest[m[0]+1:]
	}
	l.Bucket, l.Key, _ = strings.Cut(rest, "/")
	if l.Bucket == "" {
		return Location{}, fmt.Errorf("objstore: %s: no bucket in the URL", s)
	}
	return l, nil
}

// Store lists and opens objects, keeping each bucket open. It implements stream.RemoteFS.
type Store struct {
	mu       sync.Mutex
	buckets  map[string]*blob.Bucket // by bucketURL
	settings map[string]string       // scheme://bucket → the query it was first named with
	sizes    map[string]int64        // object Path → size, from listings
	// BlockSize is the largest read-ahead of a reader; 0 means DefaultBlockSize.
	BlockSize int64

	requests, bytes atomic.Int64 // over every reader, for Stats
}

// Stats returns the ranged requests made by every reader the store opened so far.
func (s *Store) Stats() Stats {
	return Stats{Requests: int(s.requests.Load()), Bytes: s.bytes.Load()}
}

// WriteFile writes data to the object at p in one request; object stores make it visible whole or
// not at all.
func (s *Store) WriteFile(ctx context.Context, p string, data []byte) error {
	l, err := Parse(p)
	if err != nil {
		return err
	}
	b, err := s.bucket(ctx, l)
	if err != nil {
		return err
	}
	if err := b.WriteAll(ctx, l.Key, data, nil); err != nil {
		return fmt.Errorf("objstore: write %s: %w", l.Path(), err)
	}
	return nil
}

// Default is the Store that stream uses.
var Default = &Store{}

var _ stream.RemoteFS = (*Store)(nil)

// IsRemote reports whether path is an object URL.
func (s *Store) IsRemote(path string) bool { return IsURL(path) }

// bucket returns the open bucket of l. A URL without a query reuses the settings the same bucket was
// first named with, so that objects listed from s3://b/…?endpoint=… open through that endpoint.
func (s *Store) bucket(ctx context.Context, l Location) (*blob.Bucket, error) {
	s.mu.Lock()
	defer s.mu.Unlock()
	if s.buckets == nil {
		s.buckets, s.settings, s.sizes = map[string]*blob.Bucket{}, map[string]string{}, map[string]int64{}
	}
	id := l.Scheme + "://" + l.Bucket
	if q, ok := s.settings[id]; ok && l.Query == "" {
		l.Query = q
	} else if !ok {
		s.settings[id] = l.Query
	}
	u := l.bucketURL()
	if b, ok := s.buckets[u]; ok {
		return b, nil
	}
	if !blob.DefaultURLMux().ValidBucketScheme(l.Scheme) {
		if l.Scheme == "s3" {
			return nil, errors.New("objstore: s3:// is not linked into this binary (import github.com/kgauge/kgauge/stream/objstore/s3, or build cmd/kgauge without -tags kgauge_nos3)")
		}
		return nil, fmt.Errorf("objstore: %s:// is not linked into this binary (build with -tags %s)", l.Scheme, schemes[l.Scheme])
	}
	b, err := blob.OpenBucket(ctx, u)
	if err != nil {
		return nil, fmt.Errorf("objstore: open bucket %s://%s: %w", l.Scheme, l.Bucket, err)
	}
	s.buckets[u] = b
	return b, nil
}

// Close closes every bucket the store opened.
func (s *Store) Close() error {
	s.mu.Lock()
	defer s.mu.Unlock()
	var errs []error
	for _, b := range s.buckets {
		errs = append(errs, b.Close())
	}
	s.buckets, s.settings, s.sizes = nil, nil, nil
	return errors.Join(errs...)
}

// pathError names the URL in an *fs.PathError, so that package stream, which names the path itself,
// reports only the cause.
func pathError(op, url string, err error) error {
	return &fs.PathError{Op: "objstore: " + op, Path: url, Err: err}
}

// hidden reports whether a key segment is skipped by listings ("_SUCCESS", ".crc", "_temporary/").
func hidden(seg string) bool { return strings.HasPrefix(seg, "_") || strings.HasPrefix(seg, ".") }

// List returns the objects pattern names; see stream.RemoteFS. A key without glob characters names
// one object, or every object below it as a prefix ("folder"); with glob characters its segments
// are matched by path.Match, "**" matching any number of segments, and a matched folder is taken
// whole, as for local directories.
func (s *Store) List(pattern string) ([]stream.RemoteObject, error) {
	ctx := context.Background()
	l, err := Parse(pattern)
	if err != nil {
		return nil, err
	}
	b, err := s.bucket(ctx, l)
	if err != nil {
		return nil, err
	}
	segs := strings.Split(strings.Trim(l.Key, "/"), "/")
	if l.Key == "" || strings.Trim(l.Key, "/") == "" {
		segs = nil
	}
	lit := 0
	for lit < len(segs) && !strings.ContainsAny(segs[lit], "*?[") {
		lit++
	}
	for _, g := range segs[lit:] {
		if g == "**" {
			continue
		}
		if _, err := path.Match(g, ""); err != nil {
			return nil, pathError("list", pattern, fmt.Errorf("bad glob pattern: %w", err))
		}
	}
	if lit == len(segs) && len(segs) > 0 && !strings.HasSuffix(l.Key, "/") {
		// Perhaps one object named exactly.
		a, err := b.Attributes(ctx, l.Key)
		switch {
		case err == nil:
			obj := l
			return []stream.RemoteObject{s.remember(obj, a.Size, a.ETag, true)}, nil
		case gcerrors.Code(err) != gcerrors.NotFound:
			return nil, pathError("list", pattern, err)
		}
	}
	prefix := strings.Join(segs[:lit], "/")
	if prefix != "" {
		prefix += "/"
	}
	var out []stream.RemoteObject
	it := b.List(&blob.ListOptions{Prefix: prefix})
	for {
		o, err := it.Next(ctx)
		if err != nil {
			if errors.Is(err, io.EOF) {
				break
			}
			return nil, pathError("list", pattern, err)
		}
		if o.IsDir || strings.HasSuffix(o.Key, "/") {
			continue
		}
		rel := strings.Split(strings.TrimPrefix(o.Key, prefix), "/")
		if slicesAny(rel, hidden) || !matchTaken(segs[lit:], rel) {
			continue
		}
		obj := l
		obj.Key = o.Key
		out = append(out, s.remember(obj, o.Size, hex.EncodeToString(o.MD5), false))
	}
	if len(out) == 0 && lit == len(segs) {
		return nil, pathError("list", pattern, fs.ErrNotExist)
	}
	sort.Slice(out, func(i, j int) bool { return out[i].Path < out[j].Path })
	return out, nil
}

// remember records a listed object's size, so that opening it needs no metadata request. etag is
// the object's ETag, or the hex MD5 a listing gives ("" when unknown).
func (s *Store) remember(l Location, size int64, etag string, explicit bool) stream.RemoteObject {
	p := l.Path()
	s.mu.Lock()
	s.sizes[p] = size
	s.mu.Unlock()
	return stream.RemoteObject{Path: p, Key: l.Key, Size: size, Explicit: explicit, ETag: strings.Trim(etag, `"`)}
}

func slicesAny(v []string, f func(string) bool) bool {
	for _, s := range v {
		if f(s) {
			return true
		}
	}
	return false
}

// matchTaken reports whether an object whose key segments below the literal prefix are rel is
// taken by the glob segments pat: pat matches rel, or matches a folder rel lies in. With no glob
// segments every object below the prefix is taken.
func matchTaken(pat, rel []string) bool {
	if len(pat) == 0 {
		return true
	}
	for n := 1; n <= len(rel); n++ {
		if matchSegs(pat, rel[:n]) {
			return true
		}
	}
	return false
}

// matchSegs matches path segments against pattern segments, "**" matching zero or more segments.
func matchSegs(pat, segs []string) bool {
	if len(pat) == 0 {
		return len(segs) == 0
	}
	if pat[0] == "**" {
		for i := 0; i <= len(segs); i++ {
			if matchSegs(pat[1:], segs[i:]) {
				return true
			}
		}
		return false
	}
	if len(segs) == 0 {
		return false
	}
	ok, err := path.Match(pat[0], segs[0])
	return ok && err == nil && matchSegs(pat[1:], segs[1:])
}

// Open opens the object at p for ranged reads; see [Reader].
func (s *Store) Open(p string) (stream.Handle, error) {
	return s.OpenContext(context.Background(), p)
}

// OpenContext is Open with a context for every request the reader makes.
func (s *Store) OpenContext(ctx context.Context, p string) (*Reader, error) {
	l, err := Parse(p)
	if err != nil {
		return nil, err
	}
	b, err := s.bucket(ctx, l)
	if err != nil {
		return nil, err
	}
	s.mu.Lock()
	size, ok := s.sizes[l.Path()]
	s.mu.Unlock()
	if !ok {
		a, err := b.Attributes(ctx, l.Key)
		if err != nil {
			if gcerrors.Code(err) == gcerrors.NotFound {
				return nil, pathError("open", l.Path(), fs.ErrNotExist)
			}
			return nil, pathError("open", l.Path(), err)
		}
		size = a.Size
	}
	r := newReader(ctx, b, l, size, s.BlockSize)
	r.store = s
	return r, nil
}
