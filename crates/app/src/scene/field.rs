//! One field of a scene document, declared once as a row: its key with the unit suffix, the unit
//! and its factor to SI, the allowed range (both ends), the decimals it is saved with, a one-line
//! meaning, the editor's label and the accessor into the document type. The rows themselves are
//! in `field_table.rs`; the decoder, the encoder, the range check, the unit conversion, the arm
//! form and the generated reference all read them.

use std::f64::consts::PI;

use super::document::JointKindDoc;
use super::problem::Problem;

/// The unit of a field in the file. Some follow the joint's kind: degrees for a revolute joint,
/// mm for a prismatic one.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Unit {
    /// Millimetres.
    Mm,
    /// Degrees.
    Deg,
    /// A joint position: degrees (revolute) or mm (prismatic).
    Position,
    /// A joint speed: °/s (revolute) or mm/s (prismatic).
    Rate,
    /// A joint acceleration: °/s² (revolute) or mm/s² (prismatic).
    Acceleration,
    /// Grams.
    G,
    /// Newton-centimetres.
    NCm,
    /// Degrees per second.
    DegPerS,
    /// Microseconds of pulse width.
    Us,
    /// Milliseconds.
    Ms,
    /// Percent.
    Percent,
    /// Hertz.
    Hz,
    /// Baud (symbols per second on the serial line).
    Baud,
    /// Gram-square-millimetres (moment of inertia).
    GMm2,
    /// No unit.
    Ratio,
}

impl Unit {
    /// The symbol shown after a value: `mm`, `°`, `N·cm`; empty for a ratio.
    pub fn symbol(self, kind: JointKindDoc) -> &'static str {
        let revolute = kind == JointKindDoc::Revolute;
        match self {
            Unit::Mm => "mm",
            Unit::Deg => "°",
            Unit::Position if revolute => "°",
            Unit::Position => "mm",
            Unit::Rate if revolute => "°/s",
            Unit::Rate => "mm/s",
            Unit::Acceleration if revolute => "°/s²",
            Unit::Acceleration => "mm/s²",
            Unit::G => "g",
            Unit::NCm => "N·cm",
            Unit::DegPerS => "°/s",
            Unit::Us => "µs",
            Unit::Ms => "ms",
            Unit::Percent => "%",
            Unit::Hz => "Hz",
            Unit::Baud => "baud",
            Unit::GMm2 => "g·mm²",
            Unit::Ratio => "",
        }
    }

    /// The factor from this unit to SI (m, rad, kg, N·m, s, kg·m², rad/s, a fraction), as the
    /// maths crates use it: N·cm → N·m is 0.01, degrees → rad is π/180. Pulse widths stay in
    /// µs in the maths crates too, so their factor here is to seconds.
    pub fn to_si(self, kind: JointKindDoc) -> f64 {
        let revolute = kind == JointKindDoc::Revolute;
        match self {
            Unit::Mm | Unit::G | Unit::Ms => 1e-3,
            Unit::Deg | Unit::DegPerS => PI / 180.0,
            Unit::Position | Unit::Rate | Unit::Acceleration if revolute => PI / 180.0,
            Unit::Position | Unit::Rate | Unit::Acceleration => 1e-3,
            Unit::NCm | Unit::Percent => 1e-2,
            Unit::Us => 1e-6,
            Unit::Hz | Unit::Baud | Unit::Ratio => 1.0,
            Unit::GMm2 => 1e-9,
        }
    }

    /// The SI unit [`Unit::to_si`] converts to, in words for the reference.
    pub fn si_symbol(self, kind: JointKindDoc) -> &'static str {
        let revolute = kind == JointKindDoc::Revolute;
        match self {
            Unit::Mm => "m",
            Unit::Deg => "rad",
            Unit::Position if revolute => "rad",
            Unit::Position => "m",
            Unit::Rate if revolute => "rad/s",
            Unit::Rate => "m/s",
            Unit::Acceleration if revolute => "rad/s²",
            Unit::Acceleration => "m/s²",
            Unit::G => "kg",
            Unit::NCm => "N·m",
            Unit::DegPerS => "rad/s",
            Unit::Us | Unit::Ms => "s",
            Unit::Percent | Unit::Ratio => "fraction",
            Unit::Hz => "Hz",
            Unit::Baud => "baud",
            Unit::GMm2 => "kg·m²",
        }
    }

    /// Whether the unit follows the joint's kind (degrees or mm).
    pub fn follows_joint_kind(self) -> bool {
        matches!(self, Unit::Position | Unit::Rate | Unit::Acceleration)
    }
}

/// An allowed range in the file's unit: a lower end (inclusive, or exclusive for "above") and an
/// inclusive upper end.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Range {
    /// Lower end.
    pub low: f64,
    /// Whether the value must be strictly above `low` (as a length or a mass must).
    pub above_low: bool,
    /// Upper end, inclusive.
    pub high: f64,
}

impl Range {
    /// Strictly above `low`, at most `high`.
    pub const fn above(low: f64, high: f64) -> Range {
        Range {
            low,
            above_low: true,
            high,
        }
    }

    /// From `low` to `high`, both included.
    pub const fn within(low: f64, high: f64) -> Range {
        Range {
            low,
            above_low: false,
            high,
        }
    }

    /// Whether `value` lies in the range (never for NaN).
    pub fn contains(&self, value: f64) -> bool {
        let low_ok = if self.above_low {
            value > self.low
        } else {
            value >= self.low
        };
        low_ok && value <= self.high
    }

    /// The range in words with its unit: "above 0 mm and at most 1000 mm", "from -360 ° to
    /// 360 °".
    pub fn describe(&self, unit: &str) -> String {
        let with = |value: f64| with_unit(&shown(value), unit);
        if self.above_low {
            format!("above {} and at most {}", with(self.low), with(self.high))
        } else {
            format!("from {} to {}", with(self.low), with(self.high))
        }
    }
}

/// A number as people read it: no `-0`, and an exponent only for sizes no arm has (1e308 is
/// not written out in 309 digits).
pub fn shown(value: f64) -> String {
    let value = if value == 0.0 { 0.0 } else { value };
    if value != 0.0 && !(1e-6..1e12).contains(&value.abs()) {
        format!("{value:e}")
    } else {
        format!("{value}")
    }
}

fn with_unit(value: &str, unit: &str) -> String {
    if unit.is_empty() {
        value.to_string()
    } else {
        format!("{value} {unit}")
    }
}

/// A field's key in the file, with its unit suffix; some keys follow the joint's kind.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Key {
    /// The same key for every joint kind.
    Fixed(&'static str),
    /// One key for a revolute joint, another for a prismatic one, with the prismatic range.
    ByKind {
        /// Key for a revolute joint (`min_deg`).
        revolute: &'static str,
        /// Key for a prismatic joint (`min_mm`).
        prismatic: &'static str,
        /// The range for a prismatic joint; the row's own range is for a revolute one.
        prismatic_range: Range,
    },
}

impl Key {
    /// The key for a joint of `kind`.
    pub fn of(self, kind: JointKindDoc) -> &'static str {
        match (self, kind) {
            (Key::Fixed(key), _) => key,
            (Key::ByKind { revolute, .. }, JointKindDoc::Revolute) => revolute,
            (Key::ByKind { prismatic, .. }, JointKindDoc::Prismatic) => prismatic,
        }
    }
}

/// Whether a field must be given.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Presence {
    /// Must be given.
    Required,
    /// May be left out; then the document type's `Default` value holds.
    Defaulted,
    /// May be left out; then there is none (an optional value or list).
    Optional,
    /// Must be given for a prismatic joint; unknown for a revolute one.
    PrismaticOnly,
}

/// How a row reads and writes its value in the document type.
pub enum Access<T> {
    /// A number.
    Number(fn(&T) -> f64, fn(&mut T, f64)),
    /// A whole number (pulse widths, baud).
    Whole(fn(&T) -> u32, fn(&mut T, u32)),
    /// A number that may be absent.
    Maybe(fn(&T) -> Option<f64>, fn(&mut T, Option<f64>)),
    /// A list of numbers: `len` of them (0: any count), each in the row's range; absent when the
    /// getter says `None`.
    List {
        /// How many numbers; 0 for any count.
        len: usize,
        /// The numbers, `None` when absent.
        get: fn(&T) -> Option<Vec<f64>>,
        /// Stores the numbers read (exactly `len` of them when `len` is not 0).
        set: fn(&mut T, &[f64]),
    },
}

// Clone and Copy by hand: the derives would ask `T: Copy`, and only fn pointers to `T` are held.
impl<T> Clone for Access<T> {
    fn clone(&self) -> Self {
        *self
    }
}
impl<T> Copy for Access<T> {}

/// One field of a document type `T`: how it is written, what it means, what it may be.
pub struct Field<T: 'static> {
    /// Key with its unit suffix: `stall_torque_ncm`.
    pub key: Key,
    /// Unit in the file.
    pub unit: Unit,
    /// Allowed range in the file's unit (for a revolute joint when the key follows the kind).
    pub range: Range,
    /// Where the ends of the range come from.
    pub range_source: &'static str,
    /// Decimals the value is saved with: enough for the trade, few enough that a save writes
    /// `49.53`, not `49.53125000000001`.
    pub decimals: u32,
    /// One line for the reference, the schema and the form's tooltip.
    pub about: &'static str,
    /// The editor's label.
    pub label: &'static str,
    /// Whether it must be given.
    pub presence: Presence,
    /// The accessor into `T`.
    pub access: Access<T>,
}

impl<T> Clone for Field<T> {
    fn clone(&self) -> Self {
        *self
    }
}
impl<T> Copy for Field<T> {}

impl<T> Field<T> {
    /// A required field with one key.
    #[allow(clippy::too_many_arguments)]
    pub const fn new(
        key: &'static str,
        unit: Unit,
        range: Range,
        range_source: &'static str,
        decimals: u32,
        label: &'static str,
        about: &'static str,
        access: Access<T>,
    ) -> Field<T> {
        Field {
            key: Key::Fixed(key),
            unit,
            range,
            range_source,
            decimals,
            about,
            label,
            presence: Presence::Required,
            access,
        }
    }

    /// The same field, which may be left out (see [`Presence`]).
    pub const fn presence(mut self, presence: Presence) -> Field<T> {
        self.presence = presence;
        self
    }

    /// The same field with another key and range for a prismatic joint.
    pub const fn prismatic(mut self, key: &'static str, range: Range) -> Field<T> {
        if let Key::Fixed(revolute) = self.key {
            self.key = Key::ByKind {
                revolute,
                prismatic: key,
                prismatic_range: range,
            };
        }
        self
    }

    /// The key for a joint of `kind` (most keys are the same for either kind).
    pub fn key(&self, kind: JointKindDoc) -> &'static str {
        self.key.of(kind)
    }

    /// The allowed range for a joint of `kind`, in the file's unit.
    pub fn range(&self, kind: JointKindDoc) -> Range {
        match (self.key, kind) {
            (
                Key::ByKind {
                    prismatic_range, ..
                },
                JointKindDoc::Prismatic,
            ) => prismatic_range,
            _ => self.range,
        }
    }

    /// Whether the field exists for a joint of `kind`.
    pub fn applies(&self, kind: JointKindDoc) -> bool {
        !(self.presence == Presence::PrismaticOnly && kind == JointKindDoc::Revolute)
    }

    /// Whether a file value must be a whole number.
    pub fn is_whole(&self) -> bool {
        matches!(self.access, Access::Whole(..))
    }

    /// The field's single value in `doc`, in the file's unit; `None` for a list, or a value
    /// that is absent.
    pub fn value(&self, doc: &T) -> Option<f64> {
        match self.access {
            Access::Number(get, _) => Some(get(doc)),
            Access::Whole(get, _) => Some(f64::from(get(doc))),
            Access::Maybe(get, _) => get(doc),
            Access::List { .. } => None,
        }
    }

    /// The field's values in `doc`, in the file's unit: one for a single value, all of a list;
    /// empty when absent.
    pub fn values(&self, doc: &T) -> Vec<f64> {
        match self.access {
            Access::List { get, .. } => get(doc).unwrap_or_default(),
            _ => self.value(doc).into_iter().collect(),
        }
    }

    /// The field's single value in SI (absent counts as 0).
    pub fn si(&self, doc: &T, kind: JointKindDoc) -> f64 {
        self.value(doc).unwrap_or(0.0) * self.unit.to_si(kind)
    }

    /// The field's list in SI.
    pub fn si_values(&self, doc: &T, kind: JointKindDoc) -> Vec<f64> {
        let factor = self.unit.to_si(kind);
        self.values(doc)
            .iter()
            .map(|value| value * factor)
            .collect()
    }

    /// Writes a single value (file unit) into `doc`.
    ///
    /// # Errors
    /// A message when a whole-number field gets a fraction or a value out of its type's
    /// reach, or the field is a list.
    pub fn set_value(&self, doc: &mut T, value: f64) -> Result<(), String> {
        match self.access {
            Access::Number(_, set) => set(doc, value),
            Access::Whole(_, set) => set(doc, whole_number(value, self.unit)?),
            Access::Maybe(_, set) => set(doc, Some(value)),
            Access::List { .. } => return Err("is a list of numbers, not one".into()),
        }
        Ok(())
    }

    /// Every value of the field in `doc` outside its range, as problems at `path`, the field's
    /// own path (for a list, the message names the entry: `x`, `y`, `z` of three, else its
    /// 0-based index).
    pub fn check(&self, doc: &T, kind: JointKindDoc, path: &str, problems: &mut Vec<Problem>) {
        if !self.applies(kind) {
            return;
        }
        let range = self.range(kind);
        let unit = self.unit.symbol(kind);
        let values = self.values(doc);
        let list = matches!(self.access, Access::List { .. });
        for (index, value) in values.iter().enumerate() {
            if range.contains(*value) {
                continue;
            }
            let entry = match (list, values.len()) {
                (false, _) => String::new(),
                (true, 3) => format!("{} ", ["x", "y", "z"][index]),
                (true, _) => format!("entry [{index}] "),
            };
            problems.push(Problem::new(
                path,
                format!(
                    "{entry}must be {}, got {}",
                    range.describe(unit),
                    with_unit(&shown(*value), unit)
                ),
            ));
        }
    }
}

/// `value` rounded to `decimals` places; `-0` becomes `0`. Dividing the rounded whole number by
/// a power of ten gives the double nearest the decimal, the one a reader of the text gets.
pub fn round_to(value: f64, decimals: u32) -> f64 {
    let scale = 10f64.powi(decimals as i32);
    let scaled = (value * scale).round();
    if !scaled.is_finite() {
        // Too large to scale: nothing below the point is left to round.
        return value;
    }
    let rounded = scaled / scale;
    if rounded == 0.0 { 0.0 } else { rounded }
}

/// A typed number as a whole number of `unit` (pulse widths, baud).
fn whole_number(value: f64, unit: Unit) -> Result<u32, String> {
    if value.fract() == 0.0 && (0.0..=f64::from(u32::MAX)).contains(&value) {
        Ok(value as u32)
    } else {
        let unit = unit.symbol(JointKindDoc::Revolute);
        Err(format!(
            "must be a whole number of {unit}, got {}",
            shown(value)
        ))
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn rounding_gives_the_short_decimal_and_no_negative_zero() {
        assert_eq!(round_to(49.531_250_000_000_01, 2), 49.53);
        assert_eq!(format!("{}", round_to(49.531_250_000_000_01, 2)), "49.53");
        assert_eq!(round_to(-0.000_01, 3).to_string(), "0");
        assert_eq!(round_to(1e300, 3), 1e300);
        // Rounding what was rounded changes nothing.
        for value in [0.1, 123.456_7, -87.654_32, 2e-4] {
            let once = round_to(value, 4);
            assert_eq!(round_to(once, 4), once);
        }
    }

    #[test]
    fn a_range_names_both_ends_with_the_unit() {
        let range = Range::above(0.0, 1000.0);
        assert!(!range.contains(0.0));
        assert!(range.contains(1000.0));
        assert!(!range.contains(f64::NAN));
        assert_eq!(range.describe("mm"), "above 0 mm and at most 1000 mm");
        assert_eq!(
            Range::within(-360.0, 360.0).describe("°"),
            "from -360 ° to 360 °"
        );
        assert_eq!(Range::within(0.1, 3.0).describe(""), "from 0.1 to 3");
    }

    #[test]
    fn units_convert_to_si() {
        // Common practice: 1 N·cm = 0.01 N·m, 1 g·mm² = 1e-9 kg·m², 180° = π rad.
        let kind = JointKindDoc::Revolute;
        assert_eq!(Unit::NCm.to_si(kind), 0.01);
        assert_eq!(Unit::GMm2.to_si(kind), 1e-9);
        assert!((180.0 * Unit::Deg.to_si(kind) - PI).abs() < 1e-15);
        assert_eq!(Unit::Position.to_si(JointKindDoc::Prismatic), 1e-3);
        assert_eq!(Unit::Rate.symbol(JointKindDoc::Prismatic), "mm/s");
    }
}
