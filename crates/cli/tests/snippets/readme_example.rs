{
    let source = std::fs::read_to_string("fixtures/demo/logger_antialias.rol")?;
    let circuit = rolloff_netlist::compile(&source, &rolloff_netlist::CompileOptions::default()).circuit.ok_or("the file has errors")?;
    let mut analyzer = rolloff_mna::Analyzer::new(&circuit)?;
    let verdicts = rolloff_report::check(&mut analyzer, &rolloff_report::sweep_frequencies(&circuit));
    assert!(verdicts.iter().all(|v| v.pass), "{verdicts:#?}");
}
