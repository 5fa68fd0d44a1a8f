//! The experiment runner: simulate once, image the same visibilities with every strategy,
//! deconvolve, score against the truth, and write the run folder.
//!
//! Model convention: plain and w gridding have no beam in their operator, so their dirty images,
//! CLEAN models and restored images are the *apparent* sky, sky × (time- and frequency-averaged
//! beam). The major cycle degrids the apparent model through the same operator, which is
//! consistent because the model already contains the beam it lacks. After restoration the
//! Taylor images are divided by the averaged, azimuthally symmetrized beam's own Taylor
//! coefficients P_t (see [`divide_beam_taylor`]) and blanked (NaN) where P_0 is below
//! `[imaging] pb_cutoff` of its peak; that is the *sky* frame, where restored images, α and the
//! error image (restored − truth ⊗ restoring beam) are judged. The floor is measured on the I0
//! residual in the apparent frame, whose thermal noise is flat across the image and the same for
//! every strategy, so floors compare across strategies and with the predicted σ_img.
//!
//! A-projection strategies (`"a"`, `"wideband-a"`) put the beam in the operator: degrid applies
//! the forward beam E_i E_j* per parallactic-angle bin, channel and hand. Their raw dirty image is
//! ≈ W · I ⊗ PSF with the sensitivity W = Σ w A_grid A_data / Σ w. They deconvolve in the
//! flat-noise frame: the major cycle hands the minor cycle residuals × g with g = 1/√W (zero where
//! √W is below `pb_cutoff` of its peak), so the minor cycle sees ≈ √W · I ⊗ PSF (the PSF of the
//! phase centre, from the plain w-stacking gridder) with bounded sidelobes, and it searches only
//! the unblanked pixels. With one Taylor term its model × g is the sky that is degridded. With
//! N ≥ 2 terms its model is the Taylor expansion of the *apparent* spectrum g · W_c · S_c (W_c the
//! channel's sensitivity), predicted channel by channel as S_c = b_c / (g W_c) (see
//! `channel_model`), so that every channel responds around a component as the spectral PSFs
//! say. Restored images are turned into the sky frame by dividing out the Taylor terms of that
//! gain g · W_c (`pbcor::gain_taylor`, the same series division as average-beam imaging; × g
//! for one term); the flat-noise residual is their apparent frame for the floor (flat noise, sky
//! weighted by ≈ P as in plain imaging), so floors compare with the other strategies. A run whose
//! residual grows stops with the best cycle's images and says so (`MajorStop::ResidualGrew`).
//!
//! Run folder:
//! ```text
//! OUT/run-in-progress.json (from the start; removed last)   run-complete.json (written last)
//!     config.resolved.toml   manifest.json   metrics.json   metrics.csv   sources.csv
//!     radial.csv   report.html   visibilities/ (reused when its truth hash matches)
//!     plots/ uv-coverage.png beam-profile.png floors.png source-flux-errors.png
//!            source-alpha-errors.png (with ≥ 2 Taylor terms) radial-rms.png stokes-v-dirty.png
//!     stokes-v-dirty.fits
//!     strategies/<name>/ restored.fits residual.fits model.fits psf.fits [alpha.fits]
//!                        restored.png residual.png error.png
//! ```

mod aproj;
mod channel_model;
mod error;
mod folder;
mod guards;
mod noise;
mod operator;
mod outputs;
mod page;
mod pbcor;
mod preflight;
mod quick_estimate;
mod residual;
mod runner;
mod stokes_v;
mod strategy;
mod tables;
mod truth;

pub use aproj::{binned_imaging_beam, build_a_operator, parallactic_angle_bins, BinnedBeam};
pub use beamfloor_deconv::CycleReport;
pub use error::RunError;
pub use folder::{
    begin_run, clear_run_folder, config_hash, describe_state, finish_run, mark_interrupted,
    mark_stopped, marker_paths, run_folder_state, RunFolderState, COMPLETE_MARKER,
    IN_PROGRESS_MARKER,
};
pub use noise::image_noise_jy;
pub use operator::{build_operator, check_strategies, w_term_of};
pub use pbcor::{beam_validity, divide_beam_taylor};
pub use preflight::{
    available_memory_bytes, estimate_memory, kernel_table_memory, preflight, preflight_with_memory,
    KernelTableMemory, MemoryEstimate, Preflight, PreflightReport, StrategyMemory, ALLOCATOR_SHARE,
    PROBE_ALL_BINS_MAX_TABLES,
};
pub use quick_estimate::{QuickEstimate, SymmetrizedBeam};
pub use residual::OperatorResiduals;
pub use runner::{run_experiment, RunObserver, RunSummary, StrategySummary};
pub use stokes_v::StokesV;
pub use strategy::{image_strategy, BeamTaylor, PsfCache, StrategyImages};
pub use tables::{short_number, table_csv, table_json};
pub use truth::{channel_weights, source_truths, truth_convolved_i0};
