//! results: everything a results folder holds. Each output table has its
//! columns, its writer and its reader here, used alike by `run`, `render`,
//! `verify` and `merge`; the manifest is a typed value; `folder` writes a
//! results folder whole or not at all; `shard` is a shard folder's files.

pub(crate) mod folder;
pub(crate) mod manifest;
pub(crate) mod shard;
pub(crate) mod tables;
