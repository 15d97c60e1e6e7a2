fn main() {
    let v = yawdyn::params::load_vehicle("/tmp/t/car.toml".as_ref(), &[]).unwrap();
    let r = yawdyn::bench::run(&v, 30f64.to_radians()).unwrap();
    println!("{r:?}");
}
