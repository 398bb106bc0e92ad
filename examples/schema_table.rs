//! Prints the README key table from the schema (`cargo run --example schema_table`).
fn main() {
    print!("{}", icefold::io::scenario::Scenario::schema_markdown());
}
