// Package s3 links the S3 driver (gocloud.dev/blob/s3blob and the AWS SDK under it) for the s3://
// URLs of package objstore. The binaries that read s3:// import it (cmd/kgauge unless built with
// the kgauge_nos3 tag, cmd/kgauge-beam); the library (package kgauge, stream/lake) does not, so
// that a program using kgauge on local files does not compile the AWS SDK.
package s3

import _ "gocloud.dev/blob/s3blob" // s3://
