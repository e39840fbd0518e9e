//! Walking the library tree (every `*.sNp` and `*.ts`), part names as relative paths,
//! part values from file names and sidecar `NAME.part.yaml` files.
