//! The demo model's maker: an invented melody corpus (`corpus`), the tensors
//! it becomes (`dataset`), an MLP VAE in candle (`vae`) trained (`train`)
//! with the AR-VAE attribute regularizer (`regularizer`), export to a model
//! package (`export`), and the steering proof (`proof`).
//!
//! Nothing in the plugin depends on this crate, so building the plugin never
//! compiles candle.

pub mod contract;
pub mod corpus;
pub mod dataset;
pub mod export;
pub mod proof;
pub mod regularizer;
pub mod train;
pub mod vae;
