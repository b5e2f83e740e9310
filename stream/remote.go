package stream

import (
	"errors"
	"fmt"
	"io"
	"io/fs"
	"os"
	"strings"
)

// Handle is an open input file: an *os.File for a local path, or what [Remote] returns for a URL.
type Handle interface {
	io.Reader
	io.ReaderAt
	io.Seeker
	io.Closer
	Stat() (fs.FileInfo, error)
}

// RemoteObject is one object listed by a [RemoteFS].
type RemoteObject struct {
	Path     string // the URL the object is opened by, such as s3://bucket/day=1/part-0.parquet
	Key      string // its key within the bucket, whose key=value segments are its hive partition
	Size     int64
	Explicit bool // the pattern named this object itself: not being a data file is then an error
	// ETag is the object's entity tag, or for a listed object the hex MD5 of its contents when the
	// store gives one ("" when unknown). Objects with the same key and ETag are taken once.
	ETag string
}

// RemoteFS lists and opens inputs that are not local files (URLs such as s3://bucket/prefix/).
type RemoteFS interface {
	// IsRemote reports whether path is a URL this file system handles.
	IsRemote(path string) bool
	// List returns the objects a URL names: the object itself, every object below a prefix, or the
	// objects matching a glob ("**" included), sorted by Path, skipping names that start with "_"
	// or ".". Errors name the URL.
	List(pattern string) ([]RemoteObject, error)
	// Open opens the object at path for ranged reads.
	Open(path string) (Handle, error)
}

// Remote handles URL inputs in Discover, Open and OpenUnit; local paths always use os.File. It is nil
// until a package such as stream/objstore sets it (in its init), and is not changed afterwards.
var Remote RemoteFS

// isRemote reports whether path is a URL for Remote.
func isRemote(path string) bool { return Remote != nil && Remote.IsRemote(path) }

// openPath opens a local file, or a URL through Remote.
func openPath(path string) (Handle, error) {
	if isRemote(path) {
		return Remote.Open(path)
	}
	// A FIFO, socket or device would block in open or read forever (or never end): only regular
	// files are data. Stat does not block; the opened file is checked again in case the name was
	// replaced in between.
	if fi, err := os.Stat(path); err != nil {
		return nil, err
	} else if !fi.Mode().IsRegular() && !fi.IsDir() {
		return nil, fmt.Errorf("%w (%s)", ErrNotRegular, fi.Mode().Type())
	}
	f, err := os.Open(path)
	if err != nil {
		return nil, err // not a typed nil in the interface
	}
	if fi, err := f.Stat(); err != nil || (!fi.Mode().IsRegular() && !fi.IsDir()) {
		f.Close()
		if err == nil {
			err = fmt.Errorf("%w (%s)", ErrNotRegular, fi.Mode().Type())
		}
		return nil, err
	}
	return f, nil
}

// ErrNotRegular is returned for an input that is neither a regular file nor a directory (a FIFO,
// a socket, a device), which could block the run or never end.
var ErrNotRegular = errors.New("stream: not a regular file")

// remote takes the data objects a URL names. Their partitions come from the key=value segments of
// their keys; an object named exactly that is no data file is an error, as for a local file.
func (d *discoverer) remote(pattern string) error {
	objs, err := Remote.List(pattern)
	if err != nil {
		return newError(pattern, "", pathCause(err))
	}
	for _, o := range objs {
		f, err := sniff(o.Path, o.Size)
		if err != nil {
			if err := d.unreadable(o.Path, err); err != nil {
				return err
			}
			continue
		}
		if f == 0 {
			if looksLikeData(o.Path) {
				if err := d.unreadable(o.Path, errDamaged); err != nil {
					return err
				}
				continue
			}
			if o.Explicit {
				return newError(o.Path, "", errNotData)
			}
			continue
		}
		d.found++
		etag := strings.Trim(o.ETag, `"`)
		key := "url:" + o.Path
		if etag != "" {
			key = "etag:" + etag + ":" + o.Key
		}
		d.files = append(d.files, File{Path: o.Path, Size: o.Size, Format: f, Partition: hivePartition(o.Key), ETag: etag, key: key})
	}
	return nil
}
