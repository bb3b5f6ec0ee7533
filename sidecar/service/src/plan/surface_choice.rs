//! Which response-surface plan a request asks for, read the same way by every
//! front end: `trialyst plan --design/--axial/--limit`, the `design`, `axial`,
//! `lowest` and `highest` keys of a plan file, and the protocol's plan request.
//!
//! Each front end names its own option or key in its messages; this module
//! only says what was wrong with the words given.

use engine::design::surface::{AxialDistance, SurfaceKind};
use engine::design::{Plan, PlanError, PlanRequest};

use super::{make_plan, make_surface_plan, FactorLimits, SurfaceDesign};

/// Centre runs of a response-surface plan when the request asks for none:
/// three to six in all is common practice for the error and the curvature,
/// and the cube part and the axial part get these each.
pub const SURFACE_CENTRE_POINTS: usize = 3;

/// A response-surface plan asked for: its design and the factors' limits.
#[derive(Debug, Clone, PartialEq)]
pub struct SurfaceChoice {
    /// Central composite (with its axial rule) or Box-Behnken.
    pub design: SurfaceDesign,
    /// The settings the process can reach, per factor.
    pub limits: Vec<FactorLimits>,
}

/// What was wrong with the words naming a response-surface plan.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[non_exhaustive]
pub enum SurfaceWordsError {
    /// The design is neither kind we make.
    #[error("'{0}': write central-composite or box-behnken")]
    UnknownDesign(String),
    /// The axial distance is no rule we know and no positive number.
    #[error("'{0}': write rotatable, orthogonal-blocks, faces or a positive distance in coded units, e.g. 1.5")]
    UnknownAxial(String),
    /// An axial distance was given for a Box-Behnken plan.
    #[error("goes with a central composite plan; a Box-Behnken plan has no axial runs")]
    AxialForBoxBehnken,
    /// Orthogonal blocking was asked of a size question, which plans no blocks.
    #[error("'orthogonal-blocks' sets the axial distance for a plan run in blocks, and sizing plans no blocks: write rotatable, faces or a positive distance in coded units, e.g. 1.5")]
    BlocksNotSized,
}

/// Lower case, with spaces and underscores read as hyphens.
fn folded(text: &str) -> String {
    text.trim()
        .to_lowercase()
        .split(|c: char| c.is_whitespace() || c == '_' || c == '-')
        .filter(|word| !word.is_empty())
        .collect::<Vec<_>>()
        .join("-")
}

/// The axial rule from its words ("rotatable", "orthogonal-blocks", "faces")
/// or a positive distance in coded units.
///
/// # Errors
///
/// [`SurfaceWordsError::UnknownAxial`].
pub fn read_axial(text: &str) -> Result<AxialDistance, SurfaceWordsError> {
    match folded(text).as_str() {
        "rotatable" => Ok(AxialDistance::Rotatable),
        "orthogonal-blocks" | "orthogonal-blocking" => Ok(AxialDistance::OrthogonalBlocking),
        "faces" | "face-centred" | "face-centered" => Ok(AxialDistance::FaceCentred),
        _ => match text.trim().parse::<f64>() {
            Ok(distance) if distance.is_finite() && distance > 0.0 => Ok(AxialDistance::Given(distance)),
            _ => Err(SurfaceWordsError::UnknownAxial(text.trim().to_string())),
        },
    }
}

/// The design from its words ("central-composite" or "box-behnken"; spaces
/// or underscores for the hyphen, any case) and the axial rule, if given
/// (rotatable when not).
///
/// # Errors
///
/// [`SurfaceWordsError`] for an unknown design or axial rule, or an axial rule
/// given for a Box-Behnken plan.
pub fn read_design(design: &str, axial: Option<AxialDistance>) -> Result<SurfaceDesign, SurfaceWordsError> {
    match folded(design).as_str() {
        "central-composite" => Ok(SurfaceDesign::CentralComposite(
            axial.unwrap_or(AxialDistance::Rotatable),
        )),
        "box-behnken" if axial.is_none() => Ok(SurfaceDesign::BoxBehnken),
        "box-behnken" => Err(SurfaceWordsError::AxialForBoxBehnken),
        _ => Err(SurfaceWordsError::UnknownDesign(design.trim().to_string())),
    }
}

/// The plan a size question asks about, from the same words as a plan: its kind
/// and the axial distance in coded units (`None`: rotatable, or none for a
/// Box-Behnken plan).
///
/// # Errors
///
/// [`SurfaceWordsError::BlocksNotSized`] for orthogonal blocking: sizing plans
/// no blocks, so the distance that makes blocks orthogonal has no meaning there.
pub fn size_surface(design: SurfaceDesign) -> Result<(SurfaceKind, Option<f64>), SurfaceWordsError> {
    match design {
        SurfaceDesign::BoxBehnken => Ok((SurfaceKind::BoxBehnken, None)),
        SurfaceDesign::CentralComposite(axial) => match axial {
            AxialDistance::Rotatable => Ok((SurfaceKind::CentralComposite, None)),
            AxialDistance::FaceCentred => Ok((SurfaceKind::CentralComposite, Some(1.0))),
            AxialDistance::Given(distance) => Ok((SurfaceKind::CentralComposite, Some(distance))),
            AxialDistance::OrthogonalBlocking => Err(SurfaceWordsError::BlocksNotSized),
        },
    }
}

/// Makes the plan a request asks for: a response-surface plan when `surface`
/// is given (with [`SURFACE_CENTRE_POINTS`] centre runs unless
/// `centre_points_given`), else the factorial or one-factor plan.
///
/// # Errors
///
/// [`PlanError`] when the plan cannot be made.
pub fn make_any_plan(
    request: &PlanRequest,
    surface: Option<&SurfaceChoice>,
    centre_points_given: bool,
) -> Result<Plan, PlanError> {
    match surface {
        None => make_plan(request),
        Some(choice) => {
            if centre_points_given || request.centre_points > 0 {
                make_surface_plan(choice.design, request, &choice.limits)
            } else {
                let mut with_centre = request.clone();
                with_centre.centre_points = SURFACE_CENTRE_POINTS;
                make_surface_plan(choice.design, &with_centre, &choice.limits)
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn design_words_are_read_in_any_spelling() {
        assert_eq!(
            read_design("Central composite", None),
            Ok(SurfaceDesign::CentralComposite(AxialDistance::Rotatable))
        );
        assert_eq!(
            read_design("central_composite", Some(AxialDistance::FaceCentred)),
            Ok(SurfaceDesign::CentralComposite(AxialDistance::FaceCentred))
        );
        assert_eq!(read_design(" BOX-Behnken ", None), Ok(SurfaceDesign::BoxBehnken));
        assert_eq!(
            read_design("box behnken", Some(AxialDistance::Rotatable)),
            Err(SurfaceWordsError::AxialForBoxBehnken)
        );
        assert_eq!(
            read_design("simplex", None),
            Err(SurfaceWordsError::UnknownDesign("simplex".into()))
        );
    }

    #[test]
    fn axial_words_and_numbers() {
        assert_eq!(read_axial("orthogonal blocks"), Ok(AxialDistance::OrthogonalBlocking));
        assert_eq!(read_axial("Faces"), Ok(AxialDistance::FaceCentred));
        assert_eq!(read_axial("1.5"), Ok(AxialDistance::Given(1.5)));
        for bad in ["0", "-1", "inf", "NaN", "far"] {
            assert!(
                matches!(read_axial(bad), Err(SurfaceWordsError::UnknownAxial(_))),
                "{bad}"
            );
        }
    }

    #[test]
    fn a_size_question_reads_the_plan_words_and_refuses_blocks() {
        let sized = |design: &str, axial: Option<&str>| {
            let axial = axial.map(|text| read_axial(text).unwrap());
            size_surface(read_design(design, axial).unwrap())
        };
        assert_eq!(
            sized("central composite", None),
            Ok((SurfaceKind::CentralComposite, None))
        );
        assert_eq!(
            sized("Central-Composite", Some("face centred")),
            Ok((SurfaceKind::CentralComposite, Some(1.0)))
        );
        assert_eq!(
            sized("central_composite", Some("1.5")),
            Ok((SurfaceKind::CentralComposite, Some(1.5)))
        );
        assert_eq!(sized("box behnken", None), Ok((SurfaceKind::BoxBehnken, None)));
        assert_eq!(
            sized("central-composite", Some("orthogonal-blocks")),
            Err(SurfaceWordsError::BlocksNotSized)
        );
    }
}
