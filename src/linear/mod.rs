//! Linear theory: transfer functions, the normalised power spectrum, sigma(M) and its
//! inverse, collapse thresholds. `LinearTheory::new` builds every table for one cosmology;
//! the result is read-only and shared across threads.

pub mod clock;
pub mod collapse;
pub mod correlation;
pub mod power;
pub mod transfer;
pub mod variance;

use std::path::PathBuf;

use serde::{Deserialize, Serialize};

pub use clock::Clock;
pub use collapse::{delta_c, delta_c_nfw97, delta_vir_crit, DeltaCModel};
pub use correlation::CorrelationTable;
pub use power::PowerSpectrum;
pub use transfer::{KUnit, Transfer, TransferKind, WarmDarkMatter};
pub use variance::{Filter, SigmaTable};

use crate::cosmology::Cosmology;
use crate::error::{Error, InvalidValue, LinearError};
use crate::halo::concentration::WdmConcentration;

/// Choices for the linear power spectrum and sigma(M), and how warm dark matter, if any,
/// changes halo concentrations.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct LinearOptions {
    pub transfer: TransferKind,
    /// Path of the table when `transfer = table`.
    pub transfer_table: Option<PathBuf>,
    /// Unit of k in the table (overrides the file header).
    pub transfer_table_k_unit: Option<KUnit>,
    pub filter: Filter,
    /// c in M = (4 pi/3) rho (c R)^3 for the sharp-k filter.
    pub sharp_k_c: f64,
    /// Thermal-relic warm dark matter particle mass (keV); None = cold dark matter.
    pub m_wdm_kev: Option<f64>,
    /// Concentration suppression under warm dark matter (ignored for cold dark matter).
    pub wdm_concentration: WdmConcentration,
    pub delta_c: DeltaCModel,
}

impl Default for LinearOptions {
    fn default() -> Self {
        Self {
            transfer: TransferKind::Eh98,
            transfer_table: None,
            transfer_table_k_unit: None,
            filter: Filter::TopHat,
            sharp_k_c: 2.5,
            m_wdm_kev: None,
            wdm_concentration: WdmConcentration::Bose16,
            delta_c: DeltaCModel::Constant,
        }
    }
}

impl LinearOptions {
    /// All problems with these options (keys prefixed by `prefix`).
    pub fn problems(&self, prefix: &str) -> Vec<InvalidValue> {
        let mut out = Vec::new();
        if !(self.sharp_k_c >= 1.0 && self.sharp_k_c <= 5.0) {
            out.push(InvalidValue::new(
                format!("{prefix}sharp_k_c"),
                self.sharp_k_c,
                "must be in [1, 5]",
            ));
        }
        if let Some(m) = self.m_wdm_kev {
            if !(0.1..=100.0).contains(&m) {
                out.push(InvalidValue::new(
                    format!("{prefix}m_wdm_kev"),
                    m,
                    "must be in [0.1, 100] keV (omit the key for cold dark matter)",
                ));
            }
        }
        if self.transfer == TransferKind::Table && self.transfer_table.is_none() {
            out.push(InvalidValue::new(
                format!("{prefix}transfer_table"),
                crate::error::MISSING,
                "a file path is required when transfer = \"table\"",
            ));
        }
        out
    }
}

/// Everything linear theory knows about one cosmology.
#[derive(Debug, Clone)]
pub struct LinearTheory {
    cosmo: Cosmology,
    options: LinearOptions,
    power: PowerSpectrum,
    sigma: SigmaTable,
    clock: Clock,
    /// The linear correlation function's table, built on first use (`correlation_table`).
    xi_table: std::sync::OnceLock<CorrelationTable>,
    /// The same cosmology and transfer function through the windows the published fits were
    /// calibrated with (`top_hat_cdm`, `cdm_same_window`); None when this theory is itself
    /// top-hat CDM.
    reference: Option<Box<FitReference>>,
}

/// Cold-dark-matter variants of a theory: through the top-hat window, and (for warm dark
/// matter through the sharp-k window) through its own window.
#[derive(Debug, Clone)]
struct FitReference {
    top_hat_cdm: LinearTheory,
    same_window_cdm: Option<LinearTheory>,
}

impl LinearTheory {
    pub fn new(cosmo: Cosmology, options: LinearOptions) -> Result<Self, Error> {
        if let Some(p) = options.problems("").into_iter().next() {
            return Err(p.into());
        }
        let p = &cosmo.params;
        let transfer = match options.transfer {
            TransferKind::Eh98 => Transfer::Eh98(transfer::EisensteinHu98::new(
                p.h, p.omega_m, p.omega_b, p.t_cmb_k,
            )),
            TransferKind::Eh98NoWiggle => Transfer::Eh98NoWiggle(
                transfer::EisensteinHu98NoWiggle::new(p.h, p.omega_m, p.omega_b, p.t_cmb_k),
            ),
            TransferKind::Bbks => Transfer::Bbks(transfer::Bbks86::new(p.h, p.omega_m, p.omega_b)),
            TransferKind::Table => {
                let path = options.transfer_table.as_ref().expect("checked above");
                Transfer::Table(transfer::TabulatedTransfer::from_file(
                    path,
                    options.transfer_table_k_unit,
                    p.h,
                    p.n_s,
                )?)
            }
        };
        let mut lt = Self::from_transfer(cosmo, options, transfer)?;
        let warm = lt.options.m_wdm_kev.is_some();
        if warm || lt.options.filter != Filter::TopHat {
            let top_hat_cdm = lt.cdm_variant(Filter::TopHat)?;
            let same_window_cdm = if warm && lt.options.filter != Filter::TopHat {
                Some(lt.cdm_variant(lt.options.filter)?)
            } else {
                None
            };
            lt.reference = Some(Box::new(FitReference {
                top_hat_cdm,
                same_window_cdm,
            }));
        }
        Ok(lt)
    }

    /// A theory from a transfer function ready to evaluate, without fit references.
    fn from_transfer(
        cosmo: Cosmology,
        options: LinearOptions,
        transfer: Transfer,
    ) -> Result<Self, Error> {
        let p = &cosmo.params;
        let wdm = options
            .m_wdm_kev
            .map(|m| WarmDarkMatter::new(m, p.h, p.omega_m, p.omega_b));
        let power = PowerSpectrum::new(transfer, wdm, p.n_s, p.sigma8, p.h);
        let rho_m0_mpc3 = cosmo.rho_m_msun_kpc3(0.0) * 1e9;
        let sigma = SigmaTable::new(&power, options.filter, options.sharp_k_c, rho_m0_mpc3)
            .map_err(Error::from)?;
        let clock = Clock::new(&cosmo, options.delta_c);
        Ok(Self {
            cosmo,
            options,
            power,
            sigma,
            clock,
            xi_table: std::sync::OnceLock::new(),
            reference: None,
        })
    }

    /// The same cosmology and transfer function through `filter`, without warm dark matter.
    fn cdm_variant(&self, filter: Filter) -> Result<Self, Error> {
        let mut options = self.options.clone();
        options.filter = filter;
        options.m_wdm_kev = None;
        Self::from_transfer(self.cosmo.clone(), options, self.power.transfer().clone())
    }

    /// This cosmology through the top-hat window without warm dark matter: the sigma(M) with
    /// which the Sheth & Tormen 1999 mass function and the Tinker et al. 2010 bias were
    /// calibrated (`massfunction::dn_dlnm_field_mpc3`, `massfunction::bias::halo_bias`).
    /// The theory itself when it is top-hat CDM.
    pub fn top_hat_cdm(&self) -> &LinearTheory {
        self.reference.as_ref().map_or(self, |r| &r.top_hat_cdm)
    }

    /// Cold dark matter through this theory's own window: the denominator of the WDM/CDM
    /// ratio of mass functions. The theory itself under cold dark matter.
    pub fn cdm_same_window(&self) -> &LinearTheory {
        match &self.reference {
            Some(r) if self.options.m_wdm_kev.is_some() => {
                r.same_window_cdm.as_ref().unwrap_or(&r.top_hat_cdm)
            }
            _ => self,
        }
    }

    pub fn cosmology(&self) -> &Cosmology {
        &self.cosmo
    }

    pub fn options(&self) -> &LinearOptions {
        &self.options
    }

    pub fn power(&self) -> &PowerSpectrum {
        &self.power
    }

    /// SHA-256 (lowercase hex) of the transfer-function table this theory was read from
    /// (None: no table, `transfer` is not "table").
    pub fn transfer_table_sha256(&self) -> Option<&str> {
        match self.power.transfer() {
            Transfer::Table(t) => Some(t.sha256()),
            _ => None,
        }
    }

    pub fn sigma_table(&self) -> &SigmaTable {
        &self.sigma
    }

    /// xi_lin(r) at z = 0 of this power spectrum, tabulated once on first use and shared by
    /// every later caller (the field counts of each chunk of hosts and each grid cell).
    pub fn correlation_table(&self) -> &CorrelationTable {
        self.xi_table
            .get_or_init(|| CorrelationTable::new(&self.power))
    }

    /// The excursion-set clock w = delta_c/D and its inverse.
    pub fn clock(&self) -> &Clock {
        &self.clock
    }

    /// sigma(M, z) = sigma(M, 0) D(z).
    pub fn sigma(&self, m_msun: f64, z: f64) -> f64 {
        self.sigma.sigma(m_msun) * self.cosmo.growth(z)
    }

    /// dln sigma / dln M (independent of z).
    pub fn dln_sigma_dln_m(&self, m_msun: f64) -> f64 {
        self.sigma.dln_sigma_dln_m(m_msun)
    }

    /// Comoving mean matter density, M_sun / Mpc^3.
    pub fn rho_m0_msun_mpc3(&self) -> f64 {
        self.cosmo.rho_m_msun_kpc3(0.0) * 1e9
    }

    /// Collapse threshold at z under the configured model.
    pub fn delta_c(&self, z: f64) -> f64 {
        collapse::delta_c(self.options.delta_c, &self.cosmo, z)
    }

    /// The excursion-set clock w(z) = delta_c(z) / D(z) (grows toward the past).
    pub fn w_of_z(&self, z: f64) -> f64 {
        self.delta_c(z) / self.cosmo.growth(z)
    }

    /// Peak height nu = delta_c(z) / sigma(M, z).
    pub fn nu(&self, m_msun: f64, z: f64) -> f64 {
        self.delta_c(z) / self.sigma(m_msun, z)
    }

    /// Warm-dark-matter half-mode mass (M_sun), if WDM is on.
    pub fn m_half_mode_msun(&self) -> Option<f64> {
        self.power.wdm().map(|w| w.m_half_mode_msun())
    }

    /// Check that a mass lies inside the sigma table.
    pub fn check_mass(&self, m_msun: f64) -> Result<(), LinearError> {
        let (lo, hi) = self.sigma.mass_range_msun();
        if m_msun >= lo && m_msun <= hi {
            Ok(())
        } else {
            Err(LinearError::OutOfTable {
                quantity: "mass (Msun)",
                value: m_msun,
                min: lo,
                max: hi,
            })
        }
    }
}
