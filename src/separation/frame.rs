//! CIELAB in a named frame at the separation's interfaces.
//!
//! The same CIELAB numbers mean different colours in different frames
//! (ICC.1:2022 §6.2.2): media-relative colorimetry takes the paper as white
//! (the frame of the perceptual and relative colorimetric intents, and the
//! working frame of the inversion), absolute colorimetry is the colour as an
//! instrument reads it off the sheet, paper tint included. A source colour
//! is given in the frame its rendering intent reads (media-relative for
//! perceptual and relative, absolute for absolute): the [`IntentFrame`].
//!
//! [`LabIn<F>`] is CIELAB with its frame as a marker type parameter, in the
//! manner of the `palette` crate's white-point parameter: a zero-sized
//! `PhantomData` beside the three numbers, so it costs nothing at run time,
//! while passing an absolute colour where a media-relative one is asked for,
//! or taking the CIEDE2000 difference of colours in two frames, does not
//! compile. One generic type rather than three newtypes keeps one set of
//! accessors for all frames. Changing frame needs the paper white, so only
//! the [`Separator`](super::Separator) does it. Inside the numeric loops the
//! plain [`Lab`] and arrays remain.

use crate::colour::{Lab, ciede2000};
use std::marker::PhantomData;

/// A frame of CIELAB colorimetry (a marker type).
pub trait Frame: Copy + Clone + std::fmt::Debug + PartialEq + Default + Send + Sync + 'static {}

/// Media-relative colorimetry: the paper is the white (L* 100).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub struct MediaRelative;

/// Absolute colorimetry: the colour as measured, against the D50 PCS white.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub struct Absolute;

/// The frame of the configured rendering intent: media-relative for
/// perceptual and relative colorimetric, absolute for absolute colorimetric.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub struct IntentFrame;

impl Frame for MediaRelative {}
impl Frame for Absolute {}
impl Frame for IntentFrame {}

/// CIELAB D50 in the frame `F`.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct LabIn<F: Frame> {
    lab: Lab,
    frame: PhantomData<F>,
}

/// Media-relative CIELAB.
pub type RelativeLab = LabIn<MediaRelative>;
/// Absolute CIELAB.
pub type AbsoluteLab = LabIn<Absolute>;
/// CIELAB in the frame of the configured rendering intent.
pub type IntentLab = LabIn<IntentFrame>;

impl<F: Frame> LabIn<F> {
    /// `lab`, declared to be in the frame `F`.
    #[inline]
    pub const fn new(lab: Lab) -> LabIn<F> {
        LabIn { lab, frame: PhantomData }
    }

    /// The plain CIELAB numbers.
    #[inline]
    pub const fn lab(self) -> Lab {
        self.lab
    }

    /// CIEDE2000 to another colour of the same frame.
    #[inline]
    pub fn delta_e(self, other: LabIn<F>) -> f64 {
        ciede2000(self.lab, other.lab)
    }
}
