fn main() {
    println!("{}", beatfold::NOTICE);
}
