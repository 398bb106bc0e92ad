fn main() {
    print!("{}", icefold::scenario::Scenario::schema_markdown());
}
