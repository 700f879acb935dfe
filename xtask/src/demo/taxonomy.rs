//! The recycling-line materials taxonomy of the demo data, and the tree structure built from it.

use anyhow::{bail, Context};

/// `(id, parent, name, weight)`. `parent` is `""` for a top-level material.
///
/// Parents come before their children, so `taxonomy.csv` is in topological order and a reader
/// can build the tree in one pass. `weight` is the relative frequency of the item on the belt
/// (only leaves carry one; internal nodes have 0): PET bottles, cans and boxes dominate a dry
/// mixed-recycling stream, while clothing or sharps are rare.
pub const NODES: &[(&str, &str, &str, u32)] = &[
    // Plastics
    ("plastic", "", "Plastics", 0),
    ("pet", "plastic", "PET", 0),
    ("pet-bottle", "pet", "PET bottles", 0),
    ("pet-bottle-clear", "pet-bottle", "Clear PET bottle", 0),
    (
        "pet-bottle-clear-label",
        "pet-bottle-clear",
        "Clear PET bottle, with label",
        24,
    ),
    (
        "pet-bottle-clear-sleeve",
        "pet-bottle-clear",
        "Clear PET bottle, full shrink sleeve",
        6,
    ),
    (
        "pet-bottle-clear-bare",
        "pet-bottle-clear",
        "Clear PET bottle, unlabelled",
        4,
    ),
    ("pet-bottle-blue", "pet-bottle", "Light-blue PET bottle", 6),
    (
        "pet-bottle-coloured",
        "pet-bottle",
        "Coloured PET bottle",
        4,
    ),
    ("pet-thermoform", "pet", "PET thermoforms", 0),
    ("pet-tray", "pet-thermoform", "PET tray", 7),
    ("pet-punnet", "pet-thermoform", "PET fruit punnet", 6),
    ("hdpe", "plastic", "HDPE", 0),
    ("hdpe-bottle", "hdpe", "HDPE bottles", 0),
    ("hdpe-milk", "hdpe-bottle", "HDPE milk bottle", 12),
    ("hdpe-detergent", "hdpe-bottle", "HDPE detergent bottle", 6),
    (
        "hdpe-toiletries",
        "hdpe-bottle",
        "HDPE toiletries bottle",
        5,
    ),
    ("pp", "plastic", "PP", 0),
    ("pp-pot", "pp", "PP pots and tubs", 0),
    ("pp-yoghurt-pot", "pp-pot", "Yoghurt pot", 7),
    ("pp-spread-tub", "pp-pot", "Spread tub", 4),
    ("pp-tray", "pp", "PP trays", 0),
    ("pp-fresh-tray", "pp-tray", "Fresh-produce tray", 5),
    ("pp-ready-meal", "pp-tray", "Ready-meal tray", 4),
    ("ps", "plastic", "Polystyrene", 0),
    ("ps-rigid", "ps", "Rigid PS", 0),
    ("ps-vending-cup", "ps-rigid", "Vending cup", 2),
    ("ps-cutlery", "ps-rigid", "Disposable cutlery", 2),
    ("eps", "ps", "Expanded PS", 0),
    ("eps-protective", "eps", "EPS protective packaging", 3),
    ("eps-food-box", "eps", "EPS food box", 2),
    ("film", "plastic", "LDPE film", 0),
    ("film-clear", "film", "Clear film", 0),
    ("film-pallet-wrap", "film-clear", "Pallet stretch wrap", 4),
    ("film-clear-bag", "film-clear", "Clear polythene bag", 5),
    ("film-printed", "film", "Printed film", 0),
    ("film-carrier-bag", "film-printed", "Printed carrier bag", 7),
    ("film-bread-bag", "film-printed", "Bread bag", 4),
    ("pvc", "plastic", "PVC", 0),
    ("pvc-rigid", "pvc", "Rigid PVC", 0),
    ("pvc-blister", "pvc-rigid", "Blister pack", 2),
    ("pvc-pipe", "pvc-rigid", "PVC pipe offcut", 1),
    ("plastic-mixed", "plastic", "Mixed plastics", 0),
    ("multilayer", "plastic-mixed", "Multilayer flexibles", 0),
    ("crisp-packet", "multilayer", "Metallised crisp packet", 6),
    ("pouch", "multilayer", "Stand-up pouch", 4),
    ("compostable", "plastic-mixed", "Compostable plastics", 0),
    ("pla-cup", "compostable", "PLA cold cup", 3),
    // Metals
    ("metal", "", "Metals", 0),
    ("ferrous", "metal", "Ferrous metals", 0),
    ("steel-can", "ferrous", "Steel cans", 0),
    ("steel-food-tin", "steel-can", "Food tin", 11),
    ("steel-drinks-can", "steel-can", "Steel drinks can", 2),
    ("steel-aerosol", "steel-can", "Steel aerosol, empty", 3),
    ("steel-other", "ferrous", "Other steel packaging", 0),
    ("steel-jar-lid", "steel-other", "Steel jar lid", 3),
    ("steel-gift-tin", "steel-other", "Biscuit or gift tin", 2),
    ("aluminium", "metal", "Aluminium", 0),
    ("alu-can", "aluminium", "Aluminium cans", 0),
    ("alu-drinks-can", "alu-can", "Aluminium drinks can", 0),
    (
        "alu-can-intact",
        "alu-drinks-can",
        "Aluminium drinks can, intact",
        9,
    ),
    (
        "alu-can-crushed",
        "alu-drinks-can",
        "Aluminium drinks can, crushed",
        9,
    ),
    ("alu-aerosol", "alu-can", "Aluminium aerosol", 3),
    ("alu-foil", "aluminium", "Aluminium foil", 0),
    ("alu-kitchen-foil", "alu-foil", "Kitchen foil", 3),
    ("alu-foil-lid", "alu-foil", "Foil lid", 2),
    // Paper and card
    ("paper", "", "Paper and card", 0),
    ("card", "paper", "Cardboard", 0),
    ("corrugated", "card", "Corrugated board", 0),
    ("corrugated-box", "corrugated", "Corrugated box", 16),
    (
        "corrugated-sheet",
        "corrugated",
        "Flattened corrugated sheet",
        6,
    ),
    ("pizza-box", "corrugated", "Pizza box", 4),
    ("boxboard", "card", "Folding boxboard", 0),
    ("cereal-box", "boxboard", "Cereal box", 6),
    ("tissue-box", "boxboard", "Tissue box", 2),
    ("graphic", "paper", "Graphic paper", 0),
    ("news-mag", "graphic", "News and magazines", 0),
    ("newspaper", "news-mag", "Newspaper", 8),
    ("magazine", "news-mag", "Glossy magazine", 5),
    ("office-paper", "graphic", "Office paper", 0),
    ("printer-paper", "office-paper", "Printer paper", 5),
    ("envelope", "office-paper", "Envelope", 4),
    ("food-drink-paper", "paper", "Food and drink packaging", 0),
    ("carton", "food-drink-paper", "Beverage cartons", 0),
    ("carton-ambient", "carton", "Ambient carton, foil-lined", 6),
    ("carton-chilled", "carton", "Chilled carton", 4),
    ("paper-cup", "food-drink-paper", "Paper cups", 0),
    ("hot-cup", "paper-cup", "Hot-drink cup", 5),
    ("cold-cup", "paper-cup", "Paper cold cup", 2),
    // Glass
    ("glass", "", "Glass", 0),
    ("container-glass", "glass", "Container glass", 0),
    ("glass-clear", "container-glass", "Clear glass", 0),
    ("clear-jar", "glass-clear", "Clear glass jar", 6),
    ("clear-bottle", "glass-clear", "Clear glass bottle", 5),
    ("glass-green", "container-glass", "Green glass", 0),
    ("green-wine-bottle", "glass-green", "Green wine bottle", 5),
    ("green-beer-bottle", "glass-green", "Green beer bottle", 3),
    ("glass-amber", "container-glass", "Amber glass", 0),
    ("amber-beer-bottle", "glass-amber", "Amber beer bottle", 4),
    (
        "amber-med-bottle",
        "glass-amber",
        "Amber medicine bottle",
        1,
    ),
    ("flat-glass", "glass", "Flat and special glass", 0),
    ("window-glass", "flat-glass", "Window glass", 0),
    ("window-shard", "window-glass", "Window glass shard", 2),
    ("special-glass", "flat-glass", "Special glass", 0),
    ("drinking-glass", "special-glass", "Drinking glass", 2),
    ("ovenware", "special-glass", "Heat-resistant ovenware", 2),
    // Textiles
    ("textile", "", "Textiles", 0),
    ("clothing", "textile", "Clothing", 0),
    ("garment", "clothing", "Garments", 0),
    ("t-shirt", "garment", "T-shirt", 2),
    ("jeans", "garment", "Jeans", 2),
    ("footwear", "clothing", "Footwear", 0),
    ("shoe", "footwear", "Shoe", 2),
    ("boot", "footwear", "Boot", 1),
    ("household-textile", "textile", "Household textiles", 0),
    ("linen", "household-textile", "Bed and table linen", 0),
    ("bedsheet", "linen", "Bed sheet", 1),
    ("towel", "linen", "Towel", 1),
    // Organics
    ("organic", "", "Organics", 0),
    ("food-waste", "organic", "Food waste", 0),
    ("fruit-veg", "food-waste", "Fruit and vegetable waste", 0),
    ("fruit-peel", "fruit-veg", "Fruit peel", 3),
    ("veg-trimmings", "fruit-veg", "Vegetable trimmings", 2),
    ("cooked-food", "food-waste", "Cooked food", 0),
    ("bread", "cooked-food", "Bread", 2),
    ("plate-scrapings", "cooked-food", "Plate scrapings", 2),
    ("wood", "organic", "Wood", 0),
    ("clean-wood", "wood", "Untreated wood", 0),
    ("pallet-slat", "clean-wood", "Pallet slat", 2),
    ("treated-wood", "wood", "Treated wood", 0),
    ("painted-wood", "treated-wood", "Painted timber", 1),
    ("chipboard", "treated-wood", "Chipboard offcut", 1),
    // Electrical waste
    ("ewaste", "", "Electrical waste", 0),
    ("battery", "ewaste", "Batteries", 0),
    ("battery-alkaline", "battery", "Alkaline and zinc cells", 0),
    ("cell-aa", "battery-alkaline", "AA or AAA cell", 3),
    ("cell-9v", "battery-alkaline", "9V block", 1),
    ("battery-lithium", "battery", "Lithium batteries", 0),
    ("coin-cell", "battery-lithium", "Lithium coin cell", 1),
    ("li-ion-pack", "battery-lithium", "Li-ion battery pack", 1),
    ("cable", "ewaste", "Cables", 0),
    ("cable-lead", "cable", "Leads and cords", 0),
    ("mains-lead", "cable-lead", "Mains lead", 2),
    ("usb-lead", "cable-lead", "USB lead", 2),
    ("small-appliance", "ewaste", "Small appliances", 0),
    ("sda-kitchen", "small-appliance", "Kitchen appliances", 0),
    ("kettle", "sda-kitchen", "Kettle", 1),
    ("toaster", "sda-kitchen", "Toaster", 1),
    ("sda-personal", "small-appliance", "Personal devices", 0),
    ("mobile-phone", "sda-personal", "Mobile phone", 1),
    ("vape", "sda-personal", "Disposable vape", 3),
    // Hazardous
    ("hazardous", "", "Hazardous", 0),
    ("household-hazardous", "hazardous", "Household hazardous", 0),
    ("paint", "household-hazardous", "Paint", 0),
    ("paint-tin", "paint", "Paint tin", 1),
    ("paint-aerosol", "paint", "Spray paint can", 1),
    ("gas-cylinder", "household-hazardous", "Gas cylinders", 0),
    ("camping-gas", "gas-cylinder", "Camping gas canister", 1),
    ("fire-extinguisher", "gas-cylinder", "Fire extinguisher", 1),
    ("clinical", "hazardous", "Clinical waste", 0),
    ("sharps", "clinical", "Sharps", 0),
    ("syringe", "sharps", "Syringe", 1),
    // Residual
    ("residual", "", "Residual waste", 0),
    ("hygiene", "residual", "Hygiene waste", 0),
    ("absorbent", "hygiene", "Absorbent hygiene products", 0),
    ("nappy", "absorbent", "Disposable nappy", 3),
    ("wet-wipe", "absorbent", "Wet wipe", 2),
    ("inert", "residual", "Inert and composite items", 0),
    ("ceramic", "inert", "Ceramics", 0),
    ("crockery", "ceramic", "Ceramic crockery", 2),
    ("composite-item", "inert", "Composite items", 0),
    ("toy", "composite-item", "Plastic toy", 2),
    ("garden-hose", "composite-item", "Garden hose", 1),
];

/// Items the simulated model never saw in training: it still knows the material and family
/// (depth 1–2) but is close to uniform below, so stopping early is the right call for them.
pub const UNLEARNED: &[&str] = &["pouch", "pla-cup", "ovenware", "vape"];

/// The taxonomy as an indexed tree. Node `k` is row `k` of `taxonomy.csv` and logit column `k`.
pub struct Taxonomy {
    pub ids: Vec<&'static str>,
    pub names: Vec<&'static str>,
    pub parent: Vec<Option<usize>>,
    /// 1 for a top-level material.
    pub depth: Vec<usize>,
    pub weight: Vec<u32>,
    /// Sibling groups, each a softmax: `groups[0]` holds the top-level nodes, the others the
    /// children of one internal node.
    pub groups: Vec<Vec<usize>>,
    /// The node whose children make up each group (`None` for `groups[0]`).
    pub group_parent: Vec<Option<usize>>,
    /// For each node, the group of its children (`None` for a leaf).
    pub child_group: Vec<Option<usize>>,
}

impl Taxonomy {
    /// Builds the tree from [`NODES`], checking that ids are unique slugs and that every parent
    /// is defined before its children.
    pub fn build() -> anyhow::Result<Self> {
        let n = NODES.len();
        let mut ids = Vec::with_capacity(n);
        let mut names = Vec::with_capacity(n);
        let mut parent = Vec::with_capacity(n);
        let mut depth = Vec::with_capacity(n);
        let mut weight = Vec::with_capacity(n);
        let mut index = std::collections::HashMap::new();
        for (k, &(id, par, name, w)) in NODES.iter().enumerate() {
            let slug_ok = !id.is_empty()
                && id
                    .bytes()
                    .all(|b| b.is_ascii_lowercase() || b.is_ascii_digit() || b == b'-');
            if !slug_ok {
                bail!("taxonomy: id {id:?} is not a lowercase slug");
            }
            if index.insert(id, k).is_some() {
                bail!("taxonomy: duplicate id {id:?}");
            }
            let p = match par {
                "" => None,
                _ => Some(*index.get(par).with_context(|| {
                    format!("taxonomy: {id:?} comes before its parent {par:?}")
                })?),
            };
            depth.push(p.map_or(1, |p: usize| depth[p] + 1));
            ids.push(id);
            names.push(name);
            parent.push(p);
            weight.push(w);
        }

        let mut groups = vec![Vec::new()];
        let mut group_parent = vec![None];
        let mut child_group = vec![None; n];
        for (k, &par) in parent.iter().enumerate() {
            let g = match par {
                None => 0,
                Some(p) => match child_group[p] {
                    Some(g) => g,
                    None => {
                        groups.push(Vec::new());
                        group_parent.push(Some(p));
                        child_group[p] = Some(groups.len() - 1);
                        groups.len() - 1
                    }
                },
            };
            groups[g].push(k);
        }

        for k in 0..n {
            let leaf = child_group[k].is_none();
            if leaf != (weight[k] > 0) {
                bail!(
                    "taxonomy: {:?} must have a weight if and only if it is a leaf",
                    ids[k]
                );
            }
        }

        Ok(Self {
            ids,
            names,
            parent,
            depth,
            weight,
            groups,
            group_parent,
            child_group,
        })
    }

    pub fn len(&self) -> usize {
        self.ids.len()
    }

    pub fn index_of(&self, id: &str) -> Option<usize> {
        self.ids.iter().position(|&x| x == id)
    }

    /// The nodes from the top-level material down to `node`, inclusive.
    pub fn path(&self, node: usize) -> Vec<usize> {
        let mut path = vec![node];
        let mut cur = node;
        while let Some(p) = self.parent[cur] {
            path.push(p);
            cur = p;
        }
        path.reverse();
        path
    }

    /// Whether `a` is `b` or one of its ancestors.
    pub fn is_ancestor_or_self(&self, a: usize, b: usize) -> bool {
        let mut cur = Some(b);
        while let Some(c) = cur {
            if c == a {
                return true;
            }
            cur = self.parent[c];
        }
        false
    }

    /// `taxonomy.csv`: header `id,parent,name`, RFC 4180 quoting, `\n` line ends.
    pub fn to_csv(&self) -> String {
        let mut out = String::from("id,parent,name\n");
        for k in 0..self.len() {
            let parent = self.parent[k].map_or("", |p| self.ids[p]);
            out.push_str(&csv_field(self.ids[k]));
            out.push(',');
            out.push_str(&csv_field(parent));
            out.push(',');
            out.push_str(&csv_field(self.names[k]));
            out.push('\n');
        }
        out
    }
}

/// One CSV field, quoted (with inner quotes doubled) only when RFC 4180 requires it.
pub fn csv_field(s: &str) -> String {
    if s.contains([',', '"', '\n', '\r']) {
        format!("\"{}\"", s.replace('"', "\"\""))
    } else {
        s.to_string()
    }
}
