//go:build kgauge_azblob

package objstore

import _ "gocloud.dev/blob/azureblob" // azblob://
