//! The drug profiles the bedside UI offers: the built-ins and the override directory
//! (`--profiles DIR`, else `EBB_PROFILES`), read once when the UI starts.

use std::path::{Path, PathBuf};
use std::sync::Arc;

use crate::analysis::ProfileSource;
use crate::core::case::Targets;
use crate::core::error::Error;
use crate::profiles::{self, Catalog, Entry};

/// The profiles available to one run of the UI (cheap to clone).
#[derive(Debug, Clone)]
pub struct Profiles {
    dir: Option<PathBuf>,
    catalog: Result<Arc<Catalog>, Error>,
    /// The catalog's error in words, when it could not be read.
    why_none: String,
}

impl Profiles {
    /// The built-ins plus the profiles in `dir`. A directory that cannot be read, or a
    /// broken profile in it, is kept as the error to show (the built-ins are not offered
    /// then either: a broken local protocol is never skipped silently).
    pub fn load(dir: Option<&Path>) -> Self {
        let catalog = Catalog::load(dir).map(Arc::new);
        Profiles {
            dir: dir.map(Path::to_path_buf),
            why_none: catalog
                .as_ref()
                .err()
                .map(Error::to_string)
                .unwrap_or_default(),
            catalog,
        }
    }

    /// As `load`, with the directory `EBB_PROFILES` names (when set).
    pub fn from_env() -> Self {
        Profiles::load(profiles::override_dir(None).as_deref())
    }

    /// The override directory, if any.
    pub fn dir(&self) -> Option<&Path> {
        self.dir.as_deref()
    }

    /// Every profile, sorted by name, or why none could be read.
    pub fn entries(&self) -> Result<&[Entry], &str> {
        match &self.catalog {
            Ok(c) => Ok(c.entries()),
            Err(_) => Err(self.why_none.as_str()),
        }
    }

    /// The profile named `name` (file stem), or the error to show at `drug.profile`.
    ///
    /// # Errors
    /// No catalog (broken override directory), or no profile of that name.
    pub fn lookup(&self, name: &str) -> Result<&Entry, String> {
        self.find(name).map_err(|e| e.to_string())
    }

    /// The profile named `name`, if it exists.
    pub fn get(&self, name: &str) -> Option<&Entry> {
        self.catalog.as_ref().ok().and_then(|c| c.get(name))
    }
}

impl ProfileSource for Profiles {
    fn find(&self, name: &str) -> Result<&Entry, Error> {
        match &self.catalog {
            Ok(c) => c.lookup(name, "drug.profile"),
            Err(e) => Err(e.clone()),
        }
    }
}

/// The targets a case gets from its profile when it has no `[targets]` of its own: those of
/// the strategy it names (`None`: the profile's default), in the case's level unit (empty
/// when the unit cannot be converted).
pub fn profile_targets(
    entry: &Entry,
    strategy: Option<&str>,
    level_unit: Option<&str>,
    molar_mass: Option<f64>,
) -> Targets {
    profiles::defaults_for_strategy(&entry.profile, strategy, level_unit, molar_mass).targets
}
