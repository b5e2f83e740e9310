package objstore

import _ "gocloud.dev/blob/s3blob" // s3://
