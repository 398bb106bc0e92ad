//! Physics laws: small, pure functions of the state and the parameters, each
//! with its equation and its publication. Nothing here knows about grids of
//! unknowns or solvers.
//!
//! - [`orbit`]: Kepler's equation, solar longitude, declination, distance.
//! - [`insolation`]: Berger (1978) daily means, exact annual means, the
//!   Legendre law (North 1975).
//! - [`albedo`]: step (Budyko 1969) and smooth albedo laws, open-surface P2 term.
//! - [`radiation`]: outgoing longwave laws and CO2 forcing (Myhre et al. 1998).
//! - [`transport`]: meridional heat transport, diffusive (North 1975) or
//!   relaxation (Budyko 1969), or moist diffusive (the diffusion of moist
//!   static energy, Hwang & Frierson 2010), as finite-volume divergences.
//! - [`humidity`]: saturation vapour pressure (Bolton 1980), saturation
//!   specific humidity and moist static energy.
//! - [`weathering`]: silicate weathering on the open surface, the slow CO2
//!   sink (Walker, Hays & Kasting 1981).

pub mod albedo;
pub mod humidity;
pub mod insolation;
pub mod orbit;
pub mod radiation;
pub mod transport;
pub mod weathering;
