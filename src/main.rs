fn main() {
    println!("quarry");
}
