fn main() {
    print!("{}", icefold::io::scenario::Scenario::schema_markdown());
}
