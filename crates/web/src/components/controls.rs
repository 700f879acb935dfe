//! The left column: stopping rule, the object threshold, one control per depth, all depths at
//! once, the per-node overrides in use, the advanced settings, and saving a profile.

use hedgerow_board::overrides::NodeOverride;
use hedgerow_board::state::Action;
use hedgerow_board::wording::{depths_differ, stop_at_root, stop_help, stop_here};
use hedgerow_core::{Rule, Settings};
use web_sys::HtmlSelectElement;
use yew::prelude::*;

use super::advanced::Advanced;
use super::node_overrides::NodeOverrides;
use super::threshold_control::ThresholdControl;

#[derive(Properties, PartialEq)]
pub struct ControlsProps {
    pub settings: Settings,
    /// Depth D of the taxonomy (0 before one is loaded).
    pub depth: usize,
    pub has_objectness: bool,
    pub focus: usize,
    /// Share of predictions stopping at each depth 0..=D, when there are metrics.
    pub stop_share: Vec<Option<f64>>,
    /// Temperatures per depth 1..=D.
    pub temperatures: Vec<f64>,
    /// The per-node thresholds in use.
    pub node_overrides: Vec<NodeOverride>,
    pub can_save: bool,
    pub on_action: Callback<Action>,
    pub on_save: Callback<()>,
    pub on_reset: Callback<()>,
}

fn rule_help(rule: Rule) -> &'static str {
    match rule {
        Rule::Cumulative => {
            "P(node) = objectness × every conditional down the path: confidence shrinks with depth."
        }
        Rule::Conditional => "p(node | parent): each step is judged on its own softmax alone.",
    }
}

#[function_component(Controls)]
pub fn controls(props: &ControlsProps) -> Html {
    crate::browser::stamp("controls-render");
    let rule = props.settings.rule;
    let select = use_node_ref();
    {
        // Keep the select showing the board's rule (a restored or loaded profile changes it).
        let select = select.clone();
        use_effect_with(rule, move |rule| {
            if let Some(s) = select.cast::<HtmlSelectElement>() {
                s.set_value(rule.as_str());
            }
        });
    }
    let on_rule = props.on_action.reform(|e: Event| {
        let s: HtmlSelectElement = e.target_unchecked_into();
        Action::SetRule(Rule::parse(&s.value()).unwrap_or_default())
    });
    let t = &props.settings.thresholds;
    let share = |d: usize| props.stop_share.get(d).copied().flatten();
    let depths = (1..=props.depth).map(|d| {
        let on_set = props.on_action.reform(move |value| Action::SetDepth { depth: d, value });
        let focus_now = props.focus;
        let on_action = props.on_action.clone();
        let on_focus = Callback::from(move |()| {
            if focus_now != d {
                on_action.emit(Action::Focus(d));
            }
        });
        let what = match rule {
            Rule::Cumulative => "P(node)",
            Rule::Conditional => "p(node | parent)",
        };
        html! {
            <ThresholdControl key={d}
                id={format!("threshold-depth-{d}")}
                label={format!("Depth {d}")}
                help={format!("Step into a depth-{d} node only if {what} ≥ this threshold. Moving it shows its sweep in the precision–specificity chart.")}
                value={t.at_depth(d)}
                focused={props.focus == d}
                aside={stop_here(share(d)).map(AttrValue::from)}
                aside_help={AttrValue::from(stop_help(d))}
                {on_set} {on_focus} />
        }
    });
    let differ = depths_differ(&t.depths);
    let all_value = if t.depths.is_empty() {
        0.5
    } else {
        t.depths.iter().sum::<f64>() / t.depths.len() as f64
    };
    let on_save = props.on_save.reform(|_: MouseEvent| ());
    let on_reset = props.on_reset.reform(|_: MouseEvent| ());
    html! {
        <section class="panel controls" aria-labelledby="controls-title">
            <h2 id="controls-title">{ "Where to stop" }</h2>
            <div class="field">
                <label for="rule">{ "Stopping rule" }</label>
                <select id="rule" data-testid="rule" ref={select} onchange={on_rule}>
                    <option value="cumulative" selected={rule == Rule::Cumulative}>{ "cumulative: P(node) ≥ t" }</option>
                    <option value="conditional" selected={rule == Rule::Conditional}>{ "conditional: p(node | parent) ≥ t" }</option>
                </select>
                <p class="help">{ rule_help(rule) }</p>
            </div>
            if props.has_objectness {
                <ThresholdControl id="threshold-object" label="Object"
                    help="A row predicts at all only if its objectness P(object) reaches this threshold; below it the row abstains. The share is of predictions that stop at the root (an object of unknown type)."
                    value={t.object}
                    aside={stop_at_root(share(0)).map(AttrValue::from)}
                    aside_help={AttrValue::from(stop_help(0))}
                    on_set={props.on_action.reform(Action::SetObject)} />
            }
            if props.depth == 0 {
                <p class="help">{ "Load a taxonomy to get one threshold per depth." }</p>
            } else {
                <fieldset class="depths">
                    <legend>{ "Threshold per depth" }</legend>
                    { for depths }
                </fieldset>
                <ThresholdControl id="threshold-all" label="All depths"
                    help="Set every depth's threshold to one value (node overrides keep theirs)."
                    value={all_value} mixed={differ.is_some()} live={false}
                    note={differ.map(AttrValue::from)}
                    on_set={props.on_action.reform(Action::SetAllDepths)} />
                <NodeOverrides overrides={props.node_overrides.clone()} />
            }
            <Advanced depth={props.depth} temperatures={props.temperatures.clone()} policy={props.settings.policy} on_action={props.on_action.clone()} />
            <div class="save">
                <button type="button" data-testid="save-profile" disabled={!props.can_save} onclick={on_save}
                    title="Download these settings as JSON, with the taxonomy fingerprint and the metrics they score here">
                    { "Save profile" }
                </button>
                <button type="button" class="secondary" data-testid="reset-settings" onclick={on_reset}
                    title="Back to the defaults: cumulative, every threshold 0.5, no per-node override, temperatures 1, credit. The files loaded stay.">
                    { "Reset" }
                </button>
                <p class="help">{ "The command line applies it with " }<code>{ "--profile FILE" }</code>{ " (evaluate, decode)." }</p>
            </div>
        </section>
    }
}
