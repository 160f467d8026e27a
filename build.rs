// A new or changed migration must rebuild the binary that embeds it.
fn main() {
    println!("cargo:rerun-if-changed=migrations");
}
