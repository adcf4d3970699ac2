//! `render`: a figure of any view, SVG or PNG by the output's extension.

use super::*;

/// What a figure shows (`render --figure NAME`).
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum FigureView {
    /// Level curves, equilibria and the session's orbits in the phase plane.
    Portrait,
    /// The sweep: equilibria against one parameter (the session's sweep, or
    /// --param/--from/--to); `diagram` is read as well.
    #[value(name = "sweep", alias = "diagram")]
    Diagram,
    /// Period against energy, or frequency against amplitude, in the well of one center.
    Backbone,
    /// Fold curves in the plane of two parameters (the session's folds, or --params/--box).
    Folds,
    /// Bohr–Sommerfeld levels over H along the center's line (the session's quantum.hbar, or --hbar).
    Levels,
    /// The stroboscopic section of a driven system (the session's drive, or --period …).
    Section,
    /// The Melnikov function over one drive period, its zeros and threshold (the session's drive, or --period …).
    Melnikov,
    /// The safe basins of the wells under the session's drive (its basin section).
    Basin,
    /// The integrity of the safe basins against the drive amplitude, with the Melnikov threshold.
    Erosion,
}

/// Which relation a backbone figure plots.
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum PlotArg {
    /// Period against energy, the escape energy as a guide.
    PeriodEnergy,
    /// Angular frequency against amplitude.
    FrequencyAmplitude,
}

/// Arguments of `render`.
#[derive(Debug, Clone, Args)]
pub struct RenderArgs {
    #[command(flatten)]
    pub system: SystemArgs,
    /// The file to write: FILE.svg or FILE.png (a figure), FILE.csv or FILE.json (its table).
    #[arg(short = 'o', long = "output", value_name = "FILE")]
    pub output: PathBuf,
    /// Size in pixels, WIDTHxHEIGHT.
    #[arg(long, value_name = "WIDTHxHEIGHT", default_value = "1000x750")]
    pub size: String,
    /// Which figure to draw (`--view`, its older name, is read as well).
    #[arg(long, alias = "view", value_name = "NAME", value_enum, default_value_t = FigureView::Portrait)]
    pub figure: FigureView,
    /// Backbone: which relation to plot.
    #[arg(long, value_enum, default_value_t = PlotArg::PeriodEnergy)]
    pub plot: PlotArg,
    #[command(flatten)]
    pub sweep: SweepFlags,
    #[command(flatten)]
    pub folds: FoldFlags,
    #[command(flatten)]
    pub backbone: BackboneFlags,
    /// Section and Melnikov: the drive (replacing the session's).
    #[command(flatten)]
    pub drive: DriveFlags,
    /// Levels: Planck's constant ħ, a number or an expression over the
    /// parameters (default: the session's quantum.hbar).
    #[arg(long, value_name = "EXPR", allow_hyphen_values = true)]
    pub hbar: Option<String>,
    /// Portrait with -o FILE.csv or FILE.json: which table to write.
    #[arg(long, value_enum)]
    pub table: Option<PortraitTable>,
}

/// The tables behind a portrait.
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum PortraitTable {
    Equilibria,
    Wells,
    /// One row of measurements per seeded orbit.
    Orbits,
    /// Every stored sample of every seeded orbit.
    Samples,
}

impl From<PortraitTable> for render::PortraitTable {
    fn from(t: PortraitTable) -> Self {
        match t {
            PortraitTable::Equilibria => render::PortraitTable::Equilibria,
            PortraitTable::Wells => render::PortraitTable::Wells,
            PortraitTable::Orbits => render::PortraitTable::Orbits,
            PortraitTable::Samples => render::PortraitTable::Samples,
        }
    }
}

impl FigureView {
    fn view(self, plot: PlotArg) -> View {
        match self {
            FigureView::Portrait => View::Portrait,
            FigureView::Diagram => View::Diagram,
            FigureView::Folds => View::Folds,
            FigureView::Levels => View::Levels,
            FigureView::Section => View::Section,
            FigureView::Melnikov => View::Melnikov,
            FigureView::Basin => View::Basin,
            FigureView::Erosion => View::Erosion,
            FigureView::Backbone => View::Backbone(match plot {
                PlotArg::PeriodEnergy => BackbonePlot::PeriodEnergy,
                PlotArg::FrequencyAmplitude => BackbonePlot::FrequencyAmplitude,
            }),
        }
    }
}

/// `render`: compute the view, then write it as SVG or PNG, or write the
/// numbers behind it as CSV or JSON, through `render::export_data`.
pub fn run_render(args: &RenderArgs) -> Result<String, CliError> {
    use crate::render::{ExportFormat, FigureSize};
    let view = args.figure.view(args.plot);
    let which = args.table.map(Into::into).unwrap_or_default();
    let format = ExportFormat::from_path(&args.output, which).ok_or_else(|| {
        CliError(format!(
            "-o {}: the file name must end in .svg or .png (a figure) or .csv or .json (a table)",
            args.output.display()
        ))
    })?;
    if args.table.is_some() && view != View::Portrait {
        return Err(CliError(format!(
            "--table chooses among the portrait's tables; the {} has one table",
            view.name()
        )));
    }
    let size = FigureSize::parse(&args.size).map_err(|e| CliError(format!("--size: {e}")))?;
    let mut r = match view {
        View::Section | View::Melnikov => drive::resolve_driven(&args.system, &args.drive)?,
        _ => args.system.resolve()?,
    };
    let command = match view {
        View::Diagram => {
            args.sweep.apply(&mut r.session)?;
            "--figure sweep".to_string()
        }
        View::Folds => {
            args.folds.apply(&mut r.session)?;
            "--figure folds".to_string()
        }
        View::Backbone(_) => {
            args.backbone.apply(&mut r.session)?;
            args.backbone.command()
        }
        View::Levels => levels::apply_hbar(&mut r.session, args.hbar.as_deref(), "--figure levels"),
        View::Portrait => "--figure portrait".to_string(),
        View::Section => "--figure section".to_string(),
        View::Melnikov => "--figure melnikov".to_string(),
        View::Basin => "--figure basin".to_string(),
        View::Erosion => "--figure erosion".to_string(),
    };
    print_warnings(&r.warnings);
    let data = compute(&r, &command, |s, sys, w, c| {
        render::view_data(s, sys, w, view, &Overrides::default(), c)
    })?;
    let out = render::export_data(&r.session, &r.system, &data, view, format, size)
        .map_err(|e| view_error(&e, &command))?;
    session::write_atomic(&args.output, |w| w.write_all(&out.bytes))
        .map_err(|e| CliError(e.to_string()))?;
    Ok(format!("wrote {} ({})", args.output.display(), out.summary))
}
