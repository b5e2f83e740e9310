package stream

import (
	"encoding/binary"
	"io"
)

// Format is the container format of a data file.
type Format uint8

// The supported formats.
const (
	Parquet     Format = iota + 1 // Apache Parquet
	ArrowFile                     // Arrow IPC file (.arrow, Feather v2)
	ArrowStream                   // Arrow IPC stream (.arrows)
)

// String returns "parquet", "arrow-file" or "arrow-stream".
func (f Format) String() string {
	switch f {
	case Parquet:
		return "parquet"
	case ArrowFile:
		return "arrow-file"
	case ArrowStream:
		return "arrow-stream"
	}
	return "unknown"
}

// sniff returns the format of the file at path from its magic bytes, or 0
// when it is none of the supported formats.
func sniff(path string, size int64) (Format, error) {
	f, err := openPath(path)
	if err != nil {
		return 0, err
	}
	defer f.Close()
	var head [8]byte
	n, err := io.ReadFull(f, head[:])
	if err != nil && err != io.ErrUnexpectedEOF && err != io.EOF {
		return 0, err
	}
	var tail [4]byte
	if size >= 12 && string(head[:4]) == "PAR1" {
		if _, err := f.ReadAt(tail[:], size-4); err != nil {
			return 0, err
		}
	}
	return sniffBytes(head[:n], tail[:], size), nil
}

// sniffBytes classifies a file from its first (up to) 8 bytes, its last 4
// bytes (read only when head starts with PAR1) and its size.
//
// Parquet: "PAR1" at both ends. Arrow IPC file: "ARROW1" at the start. Arrow
// IPC stream: a message starts with the continuation marker 0xFFFFFFFF and a
// positive little-endian int32 metadata length, or (before format 0.15)
// directly with that length (which must then fit in the file); after the marker
// a length beyond the file is a truncated stream.
func sniffBytes(head, tail []byte, size int64) Format {
	switch {
	case len(head) >= 4 && string(head[:4]) == "PAR1":
		if size >= 12 && string(tail) == "PAR1" {
			return Parquet
		}
		return 0
	case len(head) >= 6 && string(head[:6]) == "ARROW1":
		return ArrowFile
	case len(head) < 8:
		return 0
	}
	first := binary.LittleEndian.Uint32(head[:4])
	if first == 0xFFFFFFFF {
		l := int64(int32(binary.LittleEndian.Uint32(head[4:8])))
		// A positive length after the marker is a stream even when the file ends before the
		// message does: the reader then reports the truncation, which says more than "not a
		// Parquet or Arrow IPC file".
		if l > 0 {
			return ArrowStream
		}
		return 0
	}
	// Legacy stream: int32 length, then a flatbuffer whose first uint32 is the
	// offset of its root table, which lies inside the metadata.
	l := int64(int32(first))
	root := int64(binary.LittleEndian.Uint32(head[4:8]))
	if l >= 8 && 4+l <= size && root > 0 && root < l {
		return ArrowStream
	}
	return 0
}
