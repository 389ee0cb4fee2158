//! The intents a key can carry: what the user wants, with no key or terminal in sight.

use crate::tui::app::Screen;

/// One intent.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Action {
    /// Leave (asks first when there are unsaved changes).
    Quit,
    /// Save the case (asks for a file name when it has none).
    Save,
    /// Show or hide the keys of this screen.
    Help,
    /// Go to a screen.
    Show(Screen),
    /// Go to the next screen (or the previous one with `true`).
    NextScreen(bool),
    /// Move the selection up.
    Up,
    /// Move the selection down.
    Down,
    /// Move the selection left (table columns).
    Left,
    /// Move the selection right (table columns).
    Right,
    /// Edit the selected field, or step a choice.
    Activate,
    /// Step a choice field, or toggle a level's use.
    Step,
    /// Add a row to the table the selection is in.
    AddRow,
    /// Delete the selected row (asks first).
    DeleteRow,
    /// Toggle "use in fit" on the selected level.
    ToggleUse,
    /// Clear the selected optional field.
    Clear,
    /// Raise (true) or lower (false) the plan dose by one step.
    PlanDose(bool),
    /// Lengthen (true) or shorten (false) the plan interval to the next usual one.
    PlanInterval(bool),
    /// Lengthen (true) or shorten (false) the plan's infusion time.
    PlanInfusion(bool),
    /// Step the plan's route.
    PlanRoute,
    /// Copy the selected suggested regimen (or the first) into the plan.
    TakeSuggestion,
    /// Open the list of drug profiles to choose from.
    ChooseProfile,
    /// Show the chosen profile's targets, sampling advice and cautions.
    ProfileInfo,
    /// Step the fit method: automatic, log-linear, dose-history, Bayesian.
    FitMethod,
    /// Write the record note beside the case file (asks for a name when there is none).
    WriteNote,
    /// Editor: insert a character.
    Type(char),
    /// Editor: delete before the cursor.
    Backspace,
    /// Editor: delete at the cursor.
    DeleteForward,
    /// Editor: cursor left.
    CursorLeft,
    /// Editor: cursor right.
    CursorRight,
    /// Editor: cursor to the start.
    CursorHome,
    /// Editor: cursor to the end.
    CursorEnd,
    /// Editor: accept the text.
    Accept,
    /// Leave the editor, overlay or question without doing anything.
    Cancel,
    /// Answer yes.
    Yes,
    /// Answer no.
    No,
    /// Save, then quit.
    SaveThenQuit,
    /// Put the case back as it was before the last change.
    Undo,
    /// Scroll the fit screen's figures and warnings down (true) or up.
    Scroll(bool),
    /// A character typed where it is not a command (just after a new row): said, not done.
    Stray(char),
}
