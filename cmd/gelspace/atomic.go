package main

import "gelspace/render"

// WriteFileAtomic writes a file through a temporary name in the same folder
// that is synced and renamed into place, so that readers never see it half
// written (render.WriteFileAtomic, shared by every output of gelspace).
var WriteFileAtomic = render.WriteFileAtomic
