package lake

import (
	"encoding/binary"
	"hash/crc32"
)

func be32(b []byte) uint32      { return binary.BigEndian.Uint32(b) }
func le32(b []byte) uint32      { return binary.LittleEndian.Uint32(b) }
func le64(b []byte) uint64      { return binary.LittleEndian.Uint64(b) }
func crc32IEEE(b []byte) uint32 { return crc32.ChecksumIEEE(b) }
