// Seeds the demo studio idempotently. Grown by the features that own each kind of data.
console.log("seed: nothing to seed yet");
