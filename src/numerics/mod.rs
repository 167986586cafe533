//! numerics: the arithmetic every stage shares, written once. Least squares
//! (a QR factor grown row by row, with its Householder counterpart for a
//! whole design), autocovariances and long-run variances, distribution
//! functions, information criteria and the optimisers. Nothing here knows
//! about experiments; nothing here imports from the rest of the crate.

pub(crate) mod acov;
pub(crate) mod dist;
pub(crate) mod hessian;
pub(crate) mod ic;
pub(crate) mod lsq;
pub(crate) mod optimise;
pub(crate) mod stationarity;
