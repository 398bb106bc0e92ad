//! The researcher's questions built on the models: every branch of
//! equilibria and its folds ([`branches`], and with the ice edges as
//! unknowns [`edgetrace`]), the jump at each fold by integration in time
//! ([`jumps`]), regime maps over two parameters ([`sweep`]), folds continued
//! in two parameters ([`foldcurve`], and on the edge model [`edgefold`]), periodic climates by shooting
//! ([`periodic`]) and sampled through their year ([`cycle`]), every equilibrium of the linear step-albedo model
//! parametrised by its ice edge ([`skeleton`]), how far each fold moves
//! with every other parameter ([`sensitivity`]), and the carbonate-silicate
//! thermostat on the traced CO2 branches ([`thermostat`]) with its
//! independent time integration ([`coupled`]).

pub mod branches;
pub mod coupled;
pub mod cycle;
pub mod edgefold;
pub mod edgetrace;
pub mod foldcurve;
pub mod jumps;
pub mod ordered;
pub mod periodic;
pub mod sensitivity;
pub mod shooting;
pub mod skeleton;
pub mod sweep;
pub mod thermostat;
