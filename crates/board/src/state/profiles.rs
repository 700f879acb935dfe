//! Threshold profiles dropped on the page: applied to the batch in use when made for its
//! taxonomy, kept waiting when made for the staged one, refused otherwise.

use hedgerow_core::{Profile, Taxonomy};

use super::actions::Slot;
use super::text::messages;
use super::Board;

/// A profile made for the staged taxonomy while another batch is active: applied when the
/// staged batch becomes active.
#[derive(Debug, Clone)]
pub struct PendingProfile {
    pub name: String,
    pub taxonomy: String,
    pub profile: Profile,
}

impl Board {
    pub(crate) fn apply_pending_profile(&mut self) {
        let Some(a) = &self.active else { return };
        let Some(p) = self
            .pending_profile
            .take_if(|p| p.taxonomy == a.taxonomy.fingerprint())
        else {
            return;
        };
        let tax = a.taxonomy.clone();
        self.use_profile(&p.name, &p.profile, &tax);
    }

    fn use_profile(&mut self, name: &str, p: &Profile, tax: &Taxonomy) {
        match p.settings(tax) {
            Ok(s) => {
                self.settings = s;
                self.adopt_nodes(tax);
                self.temperatures = p.temperatures();
                self.fit_depths();
                self.notes.insert(
                    Slot::Profile,
                    format!(
                        "{name}: {} rule, thresholds {}",
                        p.rule.as_str(),
                        super::text::join(&p.thresholds)
                    ),
                );
                self.rescore();
            }
            Err(k) => {
                self.errors
                    .insert(Slot::Profile, vec![format!("{name}: {k}")]);
            }
        }
    }

    /// A profile applies to the active batch when made for its taxonomy; one made for the
    /// staged taxonomy waits for that batch; any other is refused.
    pub(crate) fn load_profile(&mut self, name: &str, bytes: &[u8]) {
        let active = self.active.as_ref().map(|a| a.taxonomy.clone());
        let staged = self.taxonomy.as_ref().map(|t| t.value.clone());
        let Some(first) = active.clone().or(staged.clone()) else {
            self.errors.insert(Slot::Profile, vec![format!("{name}: load a taxonomy first: a profile is checked against the taxonomy it was made for")]);
            return;
        };
        match Profile::from_json(bytes, name, &first) {
            Ok(p) => {
                self.pending_profile = None;
                self.use_profile(name, &p, &first);
            }
            Err(e) => {
                let pending = staged
                    .filter(|s| {
                        active
                            .as_ref()
                            .is_some_and(|a| a.fingerprint() != s.fingerprint())
                    })
                    .and_then(|s| Some((Profile::from_json(bytes, name, &s).ok()?, s)));
                match pending {
                    Some((profile, s)) => {
                        self.notes.insert(
                            Slot::Profile,
                            format!("{name}: waiting for the staged batch to be read (it was made for its taxonomy)"),
                        );
                        self.pending_profile = Some(PendingProfile {
                            name: name.to_string(),
                            taxonomy: s.fingerprint().to_string(),
                            profile,
                        });
                    }
                    None => {
                        self.errors.insert(Slot::Profile, messages(&e));
                    }
                }
            }
        }
    }
}
