// Migrations are embedded at compile time; a new or changed .sql file must trigger a rebuild.
fn main() {
    println!("cargo:rerun-if-changed=migrations");
    println!("cargo:rerun-if-changed=demo-inventory");
}
