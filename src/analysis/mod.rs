//! The researcher's questions built on the models: every branch of
//! equilibria and its folds ([`branches`]), the jump at each fold by
//! integration in time ([`jumps`]), regime maps over two parameters
//! ([`sweep`]), folds continued in two parameters ([`foldcurve`]) and
//! periodic climates by shooting ([`periodic`]), and every equilibrium of the
//! linear step-albedo model parametrised by its ice edge ([`skeleton`]).

pub mod branches;
pub mod foldcurve;
pub mod jumps;
pub mod periodic;
pub mod skeleton;
pub mod sweep;
