//go:build kgauge_gcs

package objstore

import _ "gocloud.dev/blob/gcsblob" // gs://
